"""Batch checking: collecting files, progress, and --isolate (child processes with time and memory limits).

The isolated run starts one child process per file; each child imports jax, so
the whole module shares one run over a folder holding every kind of bad file.

Reference values: the plane R^2 with omega = dx ^ dy and the rotation group has
mu = -(x^2 + y^2)/2 (docs/references.md, row F1, "standard").
"""

import io
import json
import os
import sys

import pytest

from hamcheck.batch import (
    DEFAULT_MEMORY_GB,
    LoadError,
    Options,
    Progress,
    collect_files,
    display_path,
    duplicate_names,
    load_models,
    run_in_process,
)
from hamcheck.cli import main

PLANE = '''
import numpy as np, jax.numpy as jnp, hamcheck
u1 = hamcheck.LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])], names=["rot"])
def plane(name, sample=None):
    return hamcheck.Model(name, 2, form=lambda x: jnp.array([[0.0, 1.0], [-1.0, 0.0]]), algebra=u1,
                          moment=lambda x: jnp.array([-(x[0] ** 2 + x[1] ** 2) / 2]),
                          action=lambda g, x: g @ x, sample=sample)
'''

ISOLATED = {
    # the two hanging files sort first so that their time limits run while the other files are checked;
    # they sleep rather than spin so that they leave the CPU to the others
    "a_hangs.py": "import time\nwhile True:\n    time.sleep(0.5)\n",
    "b_partial.py": PLANE + '''
quick = plane("quick")
calls = []
def stuck_sample(rng):  # the declaration's one call returns; the check's calls never do
    import time
    calls.append(1)
    while len(calls) > 1:
        time.sleep(0.5)
    return rng.standard_normal(2)
stuck = plane("stuck", sample=stuck_sample)
''',
    "c_aborts.py": "import os\nos.abort()\n",
    # the model's name records the address-space limit the child runs under
    "d_good.py": PLANE + "import resource\ngood = plane(f'good-as-{resource.getrlimit(resource.RLIMIT_AS)[0]}')\n",
    "e_hog.py": "chunks = []\nwhile True:\n    chunks.append(bytearray(2**28))\n",
    "f_raises.py": "import missing_module_of_a_student\n",
    "g_syntax.py": "def f(:\n",
}
TIMEOUT = 30  # seconds; a child needs ~3-8 s to import jax and ~2-5 s per small check on a loaded 2-core machine


@pytest.fixture(scope="module")
def isolated(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("batch")
    folder = tmp / "submissions"
    folder.mkdir()
    for name, text in ISOLATED.items():
        (folder / name).write_text(text)
    with open(os.path.join(os.fsencode(folder), b"h_na\xefve.py"), "w") as f:  # not UTF-8
        f.write("raise KeyError('latin-1 file name')\n")
    out = tmp / "run"
    old_err, sys.stderr = sys.stderr, io.StringIO()
    old_out, sys.stdout = sys.stdout, io.StringIO()
    try:
        code = main([
            "check", str(folder), "--isolate", "--jobs", "4", "--timeout", str(TIMEOUT),
            "--only", "antisymmetric", "moment_map", "--points", "4",
            "--json", f"{out}.json", "--csv", f"{out}.csv", "--quiet",
        ])
        stdout, stderr = sys.stdout.getvalue(), sys.stderr.getvalue()
    finally:
        sys.stderr, sys.stdout = old_err, old_out
    data = json.loads(open(f"{out}.json", encoding="utf-8").read())
    by_file = {}
    for o in data["outcomes"]:
        by_file.setdefault(o["file"].rsplit("/", 1)[-1], []).append(o)
    return code, stdout, stderr, data, by_file


def test_isolated_run_exit_code_and_every_file_has_a_row(isolated):
    code, _, _, data, by_file = isolated
    # a file that fails to load, hangs or crashes is a failed file of the batch: exit 1, never 2
    # (2 is kept for usage errors of hamcheck itself)
    assert code == 1
    assert sorted(by_file) == sorted(list(ISOLATED) + ["h_na\\xefve.py"])
    assert data["options"]["isolate"] is True


def test_good_file_passes_under_the_default_memory_limit(isolated):
    (row,) = isolated[4]["d_good.py"]
    assert row["status"] == "pass"
    # the child really ran under RLIMIT_AS = the default, and jax worked there
    assert row["model"] == f"good-as-{int(DEFAULT_MEMORY_GB * 2**30)}"


def test_file_raising_at_import_is_a_load_error(isolated):
    (row,) = isolated[4]["f_raises.py"]
    assert row["status"] == "load-error"
    assert "ModuleNotFoundError" in row["message"] and "missing_module_of_a_student" in row["message"]
    (row,) = isolated[4]["h_na\\xefve.py"]  # the child found the file from its non-UTF-8 name
    assert row["status"] == "load-error" and "KeyError" in row["message"]


def test_syntax_error_is_found_without_running_the_file(isolated):
    (row,) = isolated[4]["g_syntax.py"]
    assert row["status"] == "load-error" and row["message"].startswith("line 1: syntax error")


def test_file_that_loops_forever_at_import_times_out(isolated):
    (row,) = isolated[4]["a_hangs.py"]
    assert row["status"] == "timeout" and row["model"] is None
    assert f"time limit of {TIMEOUT} s reached while importing the file" == row["message"]
    assert "--isolate --timeout" in row["replay"]


def test_model_that_hangs_while_checked_times_out_and_earlier_results_are_kept(isolated):
    rows = {r["model"]: r for r in isolated[4]["b_partial.py"]}
    assert rows["quick"]["status"] == "pass"
    assert rows["stuck"]["status"] == "timeout"
    assert rows["stuck"]["message"].endswith("while checking this model")
    assert any(r["model"] == "quick" for r in isolated[3]["reports"])


def test_file_that_allocates_without_bound_runs_out_of_memory(isolated):
    (row,) = isolated[4]["e_hog.py"]
    # without the limit this file would grow until the time limit (bytearray pages are not touched)
    assert row["status"] == "out-of-memory", row


def test_file_that_kills_the_interpreter_is_reported_as_crashed(isolated):
    (row,) = isolated[4]["c_aborts.py"]
    assert row["status"] == "crashed" and "SIGABRT" in row["message"]


def test_isolated_summary_and_progress(isolated):
    _, stdout, stderr, data, _ = isolated
    assert "TIMEOUT" in stdout and "OUT-OF-MEMORY" in stdout and "CRASHED" in stdout
    assert stdout.splitlines()[-1] == "2 of 9 passed; 7 could not be checked"  # good + quick
    assert "[1/8]" in stderr and "[8/8]" in stderr
    assert data["counts"]["timeout"] == 2


# ------------------------------------------------------------- in process
def test_thousands_of_files_are_checked_with_throttled_progress(tmp_path, capsys):
    folder = tmp_path / "many"
    folder.mkdir()
    n = 2000
    for i in range(n):
        (folder / f"s{i:04d}.py").write_text(f"value = {i}\n")
    code = main(["check", str(folder), "--quiet"])
    out, err = capsys.readouterr()
    assert code == 1  # none defines a model: every file failed, hamcheck was used rightly
    assert f"0 of {n} passed; {n} could not be checked" in out
    progress = [ln for ln in err.splitlines() if ln.startswith("[")]
    assert progress[0].startswith(f"[1/{n}]") and progress[-1].startswith(f"[{n}/{n}]")
    assert len(progress) < n // 10  # throttled when stderr is not a terminal


def test_progress_on_a_terminal_rewrites_one_line():
    class Tty(io.StringIO):
        def isatty(self):
            return True

    stream = Tty()
    p = Progress(3, stream=stream)
    for i in range(1, 4):
        p.step(i, f"file{i}.py")
    p.done()  # clears the line: "\r", blanks, "\r"
    text = stream.getvalue()
    assert "\n" not in text and text.count("\r") == 3 + 2 and "[3/3] file3.py" in text


def test_progress_off_writes_nothing():
    stream = io.StringIO()
    p = Progress(5, stream=stream, enabled=False)
    p.step(1, "x")
    p.done()
    assert stream.getvalue() == ""


def test_collect_files_is_flat_sorted_and_skips_private_files(tmp_path):
    for name in ("b.py", "a.py", "_starter.py", "notes.txt"):
        (tmp_path / name).write_text("")
    (tmp_path / "sub").mkdir()
    (tmp_path / "sub" / "c.py").write_text("")
    assert [p.name for p in collect_files([tmp_path])] == ["a.py", "b.py"]
    with pytest.raises(LoadError, match="no such file or folder"):
        collect_files([tmp_path / "nope"])


def test_load_models_sets_source_to_the_file_checked_and_imports_siblings(tmp_path):
    (tmp_path / "_shared.py").write_text(PLANE)
    (tmp_path / "student.py").write_text("from _shared import plane\nmine = plane('mine')\n")
    (model,) = load_models(tmp_path / "student.py")
    assert model.name == "mine" and model.source == str(tmp_path / "student.py")
    assert not (tmp_path / "__pycache__").exists()  # nothing written into the user's folder
    assert str(tmp_path) not in sys.path and "_shared" not in sys.modules


def test_helpers_of_the_same_name_in_two_folders_do_not_mix(tmp_path):
    for course in ("one", "two"):
        (tmp_path / course).mkdir()
        (tmp_path / course / "_starter.py").write_text(f"COURSE = {course!r}\n")
        (tmp_path / course / "hw.py").write_text("from _starter import COURSE\nraise RuntimeError(COURSE)\n")
    messages = []
    for course in ("one", "two"):
        with pytest.raises(LoadError) as info:
            load_models(tmp_path / course / "hw.py")
        messages.append(info.value.reason)
    assert messages == ["raised RuntimeError at import: one", "raised RuntimeError at import: two"]


def test_load_models_reports_memory_errors_and_exits(tmp_path):
    (tmp_path / "m.py").write_text("raise MemoryError\n")
    with pytest.raises(LoadError) as info:
        load_models(tmp_path / "m.py")
    assert info.value.kind == "out-of-memory"
    (tmp_path / "q.py").write_text("quit()\n")
    with pytest.raises(LoadError, match=r"called sys.exit\(None\) at import"):
        load_models(tmp_path / "q.py")


def test_in_process_run_without_models_filter_and_duplicates(tmp_path):
    (tmp_path / "x.py").write_text("x = 1\n")
    run = run_in_process([tmp_path / "x.py"], Options(), warn=lambda line: None)
    assert [o.status for o in run.outcomes] == ["no-model"] and run.exit_code == 1
    assert duplicate_names(["a", "b", "a", "a", "b"]) == ["a", "b"]
    assert display_path(os.fsdecode(b"caf\xe9.py")) == "caf\\xe9.py"


HANGS_AT_IMPORT = "while True:\n    pass\n"
HANGS_IN_A_FUNCTION = ISOLATED["b_partial.py"]  # a model whose sample function never returns during the check


def test_without_isolation_a_hanging_file_times_out_and_the_rest_is_checked(tmp_path):
    (tmp_path / "a_hangs.py").write_text(HANGS_AT_IMPORT)
    (tmp_path / "b_sleeps.py").write_text(HANGS_IN_A_FUNCTION)
    (tmp_path / "c_good.py").write_text(PLANE + "good = plane('good')\n")
    lines = []
    # the good file's check is one cheap program, so that a loaded machine finishes it well inside the limit
    options = Options(points=2, only=("antisymmetric",), timeout=8.0)
    run = run_in_process(sorted(tmp_path.glob("*.py")), options, warn=lines.append)
    status = {o.file.rsplit("/", 1)[-1]: o.status for o in run.outcomes}
    assert status == {"a_hangs.py": "timeout", "b_sleeps.py": "timeout", "c_good.py": "pass"}, status
    assert run.exit_code == 1
    assert any("time limit of 8 s reached while importing the file" in ln for ln in lines), lines
    assert all("--isolate" in o.replay for o in run.outcomes if o.status == "timeout")
