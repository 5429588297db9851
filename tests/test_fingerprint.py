"""The program store: compiled check programs found again under a digest of what they are made of.

Facts relied on (common practice): a digest must change with every input of the program, or
an unchanged-looking model is served a stale program; so every test here plants a change
the digest has to see (one unit in the last place of a constant, a changed moment map).
"""

import os
import subprocess
import sys
import textwrap

import numpy as np
import pytest

from hamcheck import LieAlgebra, Model
from hamcheck._jax import jax, jnp
from hamcheck.checks._fingerprint import program_digest
from hamcheck.checks.run import Settings

ROT = np.array([[0.0, -1.0], [1.0, 0.0]])
CIRCLE = LieAlgebra.from_matrices([ROT], names=["r"])


def plane(form, moment=None):
    """R^2 with its rotations; omega = dx ^ dy has mu = -(x^2 + y^2) / 2 (from memory: the harmonic oscillator)."""
    return Model("plane", 2, form=form, algebra=CIRCLE,
                 moment=moment or (lambda x: jnp.array([-(x[0] ** 2 + x[1] ** 2) / 2])),
                 action=lambda g, x: g @ x)


def digest(model):
    return program_digest(model, ("checks", ("closed",)), Settings())


def test_equal_models_share_a_digest_and_one_ulp_of_a_constant_changes_it():
    J = np.array([[0.0, 1.0], [-1.0, 0.0]])
    a, b = plane(lambda x: jnp.asarray(J)), plane(lambda x: jnp.asarray(J.copy()))
    assert digest(a) is not None and digest(a) == digest(b)
    J2 = J.copy()
    J2[0, 1] = np.nextafter(1.0, 2.0)  # a closed-over array, one unit in the last place
    assert digest(plane(lambda x: jnp.asarray(J2))) != digest(a)
    k = np.nextafter(1.0, 2.0)  # a Python float: a literal of the jaxpr
    assert digest(plane(lambda x: k * jnp.asarray(J))) != digest(plane(lambda x: 1.0 * jnp.asarray(J)))
    # the moment map, the settings and the program key enter too
    assert digest(plane(lambda x: jnp.asarray(J), lambda x: jnp.array([-(x[0] ** 2 + x[1] ** 2)]))) != digest(a)
    assert program_digest(a, ("checks", ("closed",)), Settings(pairs=9)) != digest(a)
    assert program_digest(a, ("checks", ("invariant",)), Settings()) != digest(a)


def test_python_code_the_jaxpr_cannot_show_gets_no_digest():
    @jax.custom_jvp
    def scale(x):
        return x

    scale.defjvp(lambda primals, tangents: (primals[0], tangents[0]))  # a rule jax calls later: invisible
    J = np.array([[0.0, 1.0], [-1.0, 0.0]])
    assert digest(plane(lambda x: scale(x[0] * 0 + 1.0) * jnp.asarray(J))) is None
    fd = Model("plane-fd", 2, form=lambda x: J, algebra=CIRCLE, moment=lambda x: np.array([-(x @ x) / 2]),
               action=lambda g, x: g @ x, derivatives="finite-differences")
    assert digest(fd) is None

    class Scaled(Model):  # a subclass may override what the kernels call: its code is not in the digest
        def form_at(self, x):
            return 2 * super().form_at(x)

    scaled = Scaled("scaled", 2, form=lambda x: jnp.asarray(J), algebra=CIRCLE,
                    moment=lambda x: jnp.array([-(x[0] ** 2 + x[1] ** 2) / 2]), action=lambda g, x: g @ x)
    assert digest(scaled) is None


SCRIPT = textwrap.dedent('''
    import sys, warnings
    import jax.numpy as jnp
    import numpy as np
    import hamcheck
    from hamcheck import cache
    from hamcheck.checks import _family, run

    calls = []
    for mod in (run, _family.cache):
        real = mod.compile_lowered
        mod.compile_lowered = lambda low, options=None, real=real, **kw: calls.append(1) or real(low, options, **kw)
    factor = float(sys.argv[1])
    rot = np.array([[0.0, -1.0], [1.0, 0.0]])
    model = hamcheck.Model(
        "plane", 2, form=lambda x: jnp.array([[0.0, 1.0], [-1.0, 0.0]]),
        algebra=hamcheck.LieAlgebra.from_matrices([rot], names=["r"]),
        moment=lambda x: jnp.array([-factor * (x[0] ** 2 + x[1] ** 2) / 2]), action=lambda g, x: g @ x)
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        report = hamcheck.check(model, points=8)
    print("PASSED", report.passed)
    print("FAILING", [r.name for r in report.results.values() if r.status == "fail"])
    print("COMPILES", len(calls))
    for w in seen:
        print("WARN", w.category.__name__, w.message)
''')


def _run(folder, factor):
    env = dict(os.environ, HAMCHECK_CACHE_DIR=str(folder))
    proc = subprocess.run([sys.executable, "-c", SCRIPT, str(factor)], capture_output=True, text=True, env=env, timeout=300)
    assert proc.returncode == 0, proc.stderr[-3000:]  # a stored LAPACK program once crashed a fresh process here
    return proc.stdout


@pytest.mark.slow
def test_a_new_process_runs_stored_programs_and_never_a_stale_one(tmp_path):
    folder = tmp_path / "cache"
    first = _run(folder, 1.0)
    assert "PASSED True" in first and "COMPILES 0" not in first and "WARN" not in first, first
    stored = sorted((folder / "programs").iterdir())
    assert stored, "nothing was stored"
    again = _run(folder, 1.0)  # traced, lowered and compiled nothing: every program from the store
    assert "PASSED True" in again and "COMPILES 0" in again and "WARN" not in again, again
    planted = _run(folder, 2.0)  # the moment map doubled: another program, and the mistake is found
    assert "PASSED False" in planted and "'moment_map'" in planted and "COMPILES 0" not in planted, planted
    for entry in (folder / "programs").iterdir():  # damage every stored program
        entry.write_bytes(b"garbage")
    damaged = _run(folder, 1.0)
    assert "PASSED True" in damaged and damaged.count("WARN CacheWarning") == 1 and "cannot be read" in damaged, damaged


DEGENERATE = textwrap.dedent('''
    import sys
    import jax.numpy as jnp, numpy as np
    import hamcheck
    from hamcheck import cache
    if sys.argv[1] == "store-off":
        cache._state["store_off"] = True
    if sys.argv[1] == "plant":  # the guard removed: programs jax's cache served are stored as they are

        class Never:
            def add(self, program):
                pass

            def __contains__(self, program):
                return False

        cache._NOT_STORED = Never()
    rot = np.array([[0.0, -1.0], [1.0, 0.0]])
    # omega = x dx^dy degenerates on the line x = 0 (common practice): the degenerate-point search finds it
    model = hamcheck.Model(
        "degenerate on a line", 2, form=lambda x: x[0] * jnp.array([[0.0, 1.0], [-1.0, 0.0]]),
        algebra=hamcheck.LieAlgebra.from_matrices([rot], names=["r"]),
        moment=lambda x: jnp.array([-(x[0] ** 2 + x[1] ** 2) / 2]), action=lambda g, x: g @ x)
    import warnings
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        report = hamcheck.check(model, points=8, only=["nondegenerate"])
    for w in seen:
        print("WARN", w.category.__name__, w.message)
    print("STATUS", report.results["nondegenerate"].status, report.results["nondegenerate"].message)
    print("STORED", len(list((cache.persistent_cache_dir() / "programs").glob("*.xla"))))
''')


@pytest.mark.slow
def test_programs_served_by_jax_cache_are_never_stored(tmp_path):
    """An executable loaded from jax's persistent cache and serialized again has lost its kernels: another
    process that loads it fails at run time (reproduced on jax 0.10.2), and the degenerate-point search
    whose program failed found nothing. So the store keeps only programs compiled in the process."""
    env = dict(os.environ, HAMCHECK_CACHE_DIR=str(tmp_path / "cache"))

    def run(mode):
        proc = subprocess.run([sys.executable, "-c", DEGENERATE, mode], capture_output=True, text=True, env=env, timeout=300)
        assert proc.returncode == 0, proc.stderr[-3000:]
        return proc.stdout

    first = run("store-off")  # jax's cache gets the programs, the store nothing
    assert "STATUS fail" in first and "STORED 0" in first, first
    second = run("store-on")  # jax's cache serves every program: none may be stored
    assert "STATUS fail" in second and "STORED 0" in second, second
    third = run("store-on")
    assert "STATUS fail" in third, third


@pytest.mark.slow
def test_a_stored_program_that_cannot_run_is_rebuilt_and_the_search_still_finds_the_line(tmp_path):
    """Entries that load but fail when called (planted: the guard above removed) are deleted and compiled
    anew on their first run, with one warning: the degenerate-point search must still find x = 0."""
    env = dict(os.environ, HAMCHECK_CACHE_DIR=str(tmp_path / "cache"))

    def run(mode):
        proc = subprocess.run([sys.executable, "-c", DEGENERATE, mode], capture_output=True, text=True, env=env, timeout=300)
        assert proc.returncode == 0, proc.stderr[-3000:]
        return proc.stdout

    assert "STATUS fail" in run("store-off")
    planted = run("plant")
    assert "STATUS fail" in planted and "STORED 0" not in planted, planted  # broken entries now in the store
    healed = run("store-on")
    assert "STATUS fail" in healed and healed.count("could not run") == 1 and "NOT_FOUND" in healed, healed
    after = run("store-on")
    assert "STATUS fail" in after and "WARN" not in after, after
