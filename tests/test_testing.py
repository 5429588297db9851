"""The pytest plugin: assert_hamiltonian, declared models, the hamcheck marker, and a wheel install.

Inner pytest runs use the ``pytester`` fixture in-process (jax stays loaded);
the slow test builds the wheel, installs it into a throwaway venv and runs
pytest there in a subprocess, the way a user's project would.

Reference values: the plane R^2 with omega = dx ^ dy and the rotation group has
mu = -(x^2 + y^2)/2 in the project's convention (docs/references.md,
row F1, "standard"); negating mu is the planted mistake (finding moment-sign).
"""

import os
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

import hamcheck
from hamcheck.testing import assert_hamiltonian

pytest_plugins = ["pytester"]

ROOT = Path(__file__).resolve().parent.parent

PLANES = '''
import numpy as np, jax.numpy as jnp, hamcheck
u1 = hamcheck.LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])], names=["rot"])
def plane(name, sign=1.0):
    return hamcheck.Model(name, 2, form=lambda x: jnp.array([[0.0, 1.0], [-1.0, 0.0]]), algebra=u1,
                          moment=lambda x: sign * jnp.array([-(x[0] ** 2 + x[1] ** 2) / 2]),
                          action=lambda g, x: g @ x)
good = plane("good")
flipped = plane("flipped", sign=-1.0)
OPTIONS = {"points": 4, "only": ["antisymmetric", "moment_map"]}
'''

USER_TESTS = PLANES + '''
import pytest
from hamcheck.testing import assert_hamiltonian

hamcheck_models = [good, flipped]
hamcheck_options = OPTIONS

@pytest.mark.hamcheck(good, flipped, **OPTIONS)
def test_antisymmetric_everywhere(hamcheck_report):
    assert hamcheck_report.results["antisymmetric"].status == "pass"

def test_direct_call():
    assert_hamiltonian(flipped, **OPTIONS)
'''


def test_plugin_in_a_test_module(pytester):
    pytester.makepyfile(test_spaces=USER_TESTS)
    # --hamcheck-points overrides the tests' own points=4 (seen in the replay command below)
    result = pytester.runpytest_inprocess("-v", "-p", "no:cacheprovider", "--hamcheck-points", "5")
    result.assert_outcomes(passed=3, failed=2)
    result.stdout.fnmatch_lines([
        "*test_spaces.py::hamcheck?good? PASSED*",
        "*test_spaces.py::hamcheck?flipped? FAILED*",
        "*test_antisymmetric_everywhere?good? PASSED*",
        "*test_antisymmetric_everywhere?flipped? PASSED*",
        "*test_direct_call FAILED*",
    ])
    text = result.stdout.str()
    # the failure message is the report's table, its finding, the explanation and the replay command
    assert "moment_map          fail" in text
    assert "[moment-sign]" in text
    assert "Condition: the moment equation, with sign = +1" in text
    assert "test_spaces.py --model flipped --seed 0 --points 5 --only moment_map" in text  # plugin-run items
    assert "test_spaces.py --model flipped --seed 0 --points 4 --only moment_map" in text  # direct call


def test_misuse_gives_clear_messages(pytester):
    pytester.makepyfile(
        test_no_marker="def test_needs(hamcheck_report):\n    pass\n",
        test_not_a_model="hamcheck_models = ['not a model']\n",
    )
    result = pytester.runpytest_inprocess("-p", "no:cacheprovider", "--continue-on-collection-errors")
    result.assert_outcomes(failed=1, errors=1)
    result.stdout.fnmatch_lines([
        "*has no @pytest.mark.hamcheck(model, ...) marker naming the models to check*",
        "*hamcheck_models must hold hamcheck.Model objects; got str*",
    ])


def test_assert_hamiltonian_rejects_unknown_options_and_non_models():
    with pytest.raises(hamcheck.UsageError, match="unknown option"):
        assert_hamiltonian(object(), pionts=4)
    with pytest.raises(hamcheck.UsageError, match="takes a hamcheck.Model; got int"):
        assert_hamiltonian(3)


# ------------------------------------------------------------- from a wheel
THROWAWAY_TESTS = PLANES + '''
import sys
from pathlib import Path
from hamcheck.testing import assert_hamiltonian

hamcheck_models = [good]
hamcheck_options = OPTIONS

def test_hamcheck_comes_from_the_installed_wheel():
    assert Path(hamcheck.__file__).resolve().is_relative_to(Path(sys.prefix).resolve()), hamcheck.__file__

def test_planted_mistake_fails():
    assert_hamiltonian(flipped, **OPTIONS)
'''


def _run(cmd, **kw):
    proc = subprocess.run(cmd, capture_output=True, text=True, **kw)
    return proc


def _running_site_packages():
    """Site-packages of the environment running the tests (a venv's own, never the base's)."""
    import site
    dirs = [d for d in site.getsitepackages() if Path(d).is_dir()]
    return [d for d in dirs if d not in _base_site_packages() or sys.prefix == sys.base_prefix]


def _base_site_packages():
    import sysconfig
    scheme = {"base": sys.base_prefix, "platbase": sys.base_prefix}
    return {sysconfig.get_paths(vars=scheme)["purelib"], sysconfig.get_paths(vars=scheme)["platlib"]}


@pytest.mark.slow
def test_plugin_works_in_a_project_installed_from_the_wheel(tmp_path):
    # copy only what the wheel is built from, so no build/ or *.egg-info lands in the repository
    src = tmp_path / "src"
    src.mkdir()
    shutil.copy(ROOT / "pyproject.toml", src)
    for extra in ("README.md", "LICENSE"):
        if (ROOT / extra).exists():
            shutil.copy(ROOT / extra, src)
    shutil.copytree(ROOT / "hamcheck", src / "hamcheck", ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copy(ROOT / "pytest_hamcheck.py", src)
    dist = tmp_path / "dist"
    built = _run([sys.executable, "-m", "pip", "wheel", str(src), "--no-deps", "-q", "-w", str(dist)], timeout=600)
    assert built.returncode == 0, built.stderr[-2000:]
    (wheel,) = dist.glob("hamcheck-*.whl")

    venv = tmp_path / "venv"
    # A bare venv (no --system-site-packages: those would be the *base* interpreter's packages,
    # which a fresh machine does not have). Its dependencies come from the environment running
    # these tests, through a .pth file naming that environment's site-packages: no download.
    made = _run([sys.executable, "-m", "venv", "--without-pip", str(venv)], timeout=300)
    assert made.returncode == 0, made.stderr
    py = venv / "bin" / "python"
    venv_site = Path(_run([str(py), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
                          timeout=60).stdout.strip())
    (venv_site / "_running_environment.pth").write_text("\n".join(_running_site_packages()) + "\n")
    pip = [sys.executable, "-m", "pip", "--python", str(py)]  # this pip installs into the venv
    installed = _run(pip + ["install", "--no-deps", "--no-index", "-q", str(wheel)], timeout=300)
    assert installed.returncode == 0, installed.stderr[-2000:]
    # the guard of issue "README's test command fails on a fresh machine": nothing of the base
    # interpreter's site-packages may be visible in the throwaway environment
    seen = _run([str(py), "-c", "import sys; print('\\n'.join(sys.path))"], timeout=60).stdout.split()
    if sys.prefix != sys.base_prefix:  # run from a venv: the base interpreter must stay out of sight
        assert not set(seen) & set(_base_site_packages()), seen

    project = tmp_path / "project"
    (project / "tests").mkdir(parents=True)
    (project / "tests" / "test_my_spaces.py").write_text(THROWAWAY_TESTS)
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "PYTEST_ADDOPTS")}
    ran = _run([str(py), "-m", "pytest", "-v", "-p", "no:cacheprovider", "tests"], cwd=project, env=env, timeout=600)
    out = ran.stdout + ran.stderr
    assert ran.returncode == 1, out[-4000:]  # exactly the planted mistake fails
    assert "test_my_spaces.py::hamcheck[good] PASSED" in out, out[-4000:]
    assert "test_hamcheck_comes_from_the_installed_wheel PASSED" in out, out[-4000:]
    assert "test_planted_mistake_fails FAILED" in out and "[moment-sign]" in out, out[-4000:]
    assert "1 failed, 2 passed" in out, out[-4000:]


def test_loading_the_plugin_imports_neither_hamcheck_nor_jax(pytester):
    # a project with hamcheck installed but not used must not pay for jax at pytest start-up
    pytester.makepyfile(test_plain="""
        import sys
        def test_nothing_heavy_loaded():
            assert "pytest_hamcheck" in sys.modules
            assert "jax" not in sys.modules and "hamcheck" not in sys.modules, sorted(sys.modules)
    """)
    result = pytester.runpytest_subprocess("-p", "no:cacheprovider")
    result.assert_outcomes(passed=1)


def test_assert_passes_takes_any_report_or_result_with_a_report():
    from hamcheck.testing import HamiltonianCheckFailed, assert_passes
    ns = {}
    exec(PLANES, ns)
    good = hamcheck.check(ns["good"], points=4, only=["antisymmetric", "moment_map"])
    assert assert_passes(good) is good

    class Holder:  # a result that renders through a Report, as orbit classifications do
        def report(self):
            return hamcheck.check(ns["flipped"], points=4, only=["antisymmetric", "moment_map"])

    with pytest.raises(HamiltonianCheckFailed, match=r"\[moment-sign\]"):
        assert_passes(Holder())
    with pytest.raises(hamcheck.UsageError, match="takes a hamcheck.Report or a result with .report"):
        assert_passes(3)


def test_no_test_relies_on_the_base_interpreter():
    # A throwaway environment made with the system-site-packages option sees the *base*
    # interpreter's packages, which a fresh machine does not have (a green CI once hid that).
    option = "--system-" + "site-packages"
    for path in (ROOT / "tests").glob("*.py"):
        code = [line for line in path.read_text().splitlines() if not line.lstrip().startswith("#")]
        assert not any(option in line for line in code), f"{path.name} makes an environment with {option}"


def test_throwaway_sources_are_valid_python():
    # cheap guard for the slow test above: its generated files must at least compile
    compile(textwrap.dedent(THROWAWAY_TESTS), "test_my_spaces.py", "exec")
    compile(textwrap.dedent(USER_TESTS), "test_spaces.py", "exec")
