"""Batches on a Dask cluster (hamcheck.distributed, ``hamcheck check --scheduler ADDRESS``).

A batch sent to a 2-worker LocalCluster by its address must give the same verdicts, summary, CSV
and JSON as the sequential ``--isolate`` run (only timings may differ). Reference value: the plane
R^2 with omega = dx ^ dy and the rotation group has mu = -(x^2 + y^2)/2 (standard, from memory);
the planted mistake flips its sign.
"""

import contextlib
import csv
import io
import json
import socket

import pytest

from hamcheck.batch import Options
from hamcheck.cli import main

distributed = pytest.importorskip("distributed")

PLANE = '''
import numpy as np, jax.numpy as jnp, hamcheck
u1 = hamcheck.LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])], names=["rot"])
def plane(name, s=1.0):
    return hamcheck.Model(name, 2, form=lambda x: jnp.array([[0.0, 1.0], [-1.0, 0.0]]), algebra=u1,
                          moment=lambda x: jnp.array([-s * (x[0] ** 2 + x[1] ** 2) / 2]),
                          action=lambda g, x: g @ x)
'''

FILES = {
    "_plane.py": PLANE,  # a helper beside the submissions: must be shipped with them
    "a_hangs.py": "import time\nwhile True:\n    time.sleep(0.5)\n",  # first, so its limit runs while others are checked
    "b_passes.py": "from _plane import plane\ngood = plane('good')\n",
    "c_fails.py": "from _plane import plane\nwrong = plane('wrong', s=-1.0)\n",
    "d_crashes.py": "import os\nos.abort()\n",
}
TIMEOUT = 20  # s per file: a child imports jax in 3-8 s on a loaded 2-core machine; the check is small
ARGS = ["--timeout", str(TIMEOUT), "--only", "antisymmetric", "moment_map", "--points", "4", "--quiet"]


@pytest.fixture(scope="module")
def cluster():
    from _cluster import two_workers

    with two_workers(allowed_failures=0) as (cluster, client):
        yield cluster, client


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    d = tmp_path_factory.mktemp("batch") / "submissions"
    d.mkdir()
    for name, text in FILES.items():
        (d / name).write_text(text)
    return d


def _run(capfd, args):
    code = main(args)
    out, err = capfd.readouterr()
    return code, out, err


def _without_timings(data):
    data = json.loads(data)
    data.pop("seconds")
    data.pop("options")
    for row in data["outcomes"]:
        row.pop("seconds")
    for rep in data["reports"]:
        rep.pop("seconds", None)
    return data


def _csv_without_seconds(text):
    rows = list(csv.DictReader(io.StringIO(text)))
    return [{k: v for k, v in r.items() if k != "seconds"} for r in rows]


@pytest.fixture(scope="module")
def both_runs(folder, cluster, tmp_path_factory):
    """The same batch run sequentially (--isolate) and on the cluster by its address."""
    out = tmp_path_factory.mktemp("out")
    runs = {}
    for label, extra in (("sequential", ["--isolate"]), ("cluster", ["--scheduler", cluster[0].scheduler_address])):
        so, se = io.StringIO(), io.StringIO()
        with contextlib.redirect_stdout(so), contextlib.redirect_stderr(se):
            code = main(["check", str(folder)] + extra + ARGS + ["--json", str(out / f"{label}.json"), "--csv", str(out / f"{label}.csv")])
        runs[label] = (code, so.getvalue(), se.getvalue(), (out / f"{label}.json").read_text(), (out / f"{label}.csv").read_text())
    return runs


def test_cluster_batch_gives_the_verdicts_of_a_sequential_run(both_runs):
    code, out, err, js, _ = both_runs["cluster"]
    assert code == 1  # files that hang or crash are failed files of the batch (exit 1)
    status = {o["file"].rsplit("/", 1)[-1]: o["status"] for o in json.loads(js)["outcomes"]}
    assert status == {"a_hangs.py": "timeout", "b_passes.py": "pass", "c_fails.py": "fail", "d_crashes.py": "crashed"}
    assert out.splitlines()[-1] == "1 of 4 passed; 1 failed; 2 could not be checked"


def test_cluster_batch_summary_csv_and_json_equal_the_sequential_ones(both_runs):
    seq, clu = both_runs["sequential"], both_runs["cluster"]
    assert clu[0] == seq[0]
    assert clu[1] == seq[1]  # the printed summary, in file order
    assert _csv_without_seconds(clu[4]) == _csv_without_seconds(seq[4])
    assert _without_timings(clu[3]) == _without_timings(seq[3])
    warnings = lambda err: sorted(ln for ln in err.splitlines() if ln.startswith("hamcheck:"))  # noqa: E731
    assert warnings(clu[2]) == warnings(seq[2])
    # the failing row replays with the user's path, not the worker's copy
    fail = next(o for o in json.loads(clu[3])["outcomes"] if o["status"] == "fail")
    assert fail["replay"].startswith("hamcheck check ") and "c_fails.py --model wrong" in fail["replay"]
    assert json.loads(clu[3])["options"]["scheduler"].startswith("tcp://127.0.0.1:")


def test_files_are_shipped_by_content(cluster, tmp_path):
    from hamcheck.distributed import _check_shipped

    # a folder that exists only in memory here: the worker gets the bytes, helper included
    bundle = {"digest": "in-memory-test-bundle-1", "files": {
        "hw.py": b"from _helper import WHO\nraise RuntimeError(WHO)\n", "_helper.py": b"WHO = 'shipped helper'\n"}}
    fut = cluster[1].submit(_check_shipped, bundle, "hw.py", "course/hw.py", Options(timeout=TIMEOUT), pure=False)
    outcomes, reports, warnings = fut.result()
    (row,) = outcomes
    assert row["file"] == "course/hw.py" and row["status"] == "load-error"
    assert row["message"] == "raised RuntimeError at import: shipped helper" and not reports


def test_unreachable_scheduler_is_one_line_and_exit_2(folder, capfd, monkeypatch):
    import hamcheck.distributed as hd

    monkeypatch.setattr(hd, "CONNECT_TIMEOUT", 2.0)
    with socket.socket() as s:  # a port nobody listens on
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    code, out, err = _run(capfd, ["check", str(folder / "b_passes.py"), "--scheduler", f"tcp://127.0.0.1:{port}"])
    assert code == 2 and out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"hamcheck: cannot reach the Dask scheduler at tcp://127.0.0.1:{port}")
    code, _, err = _run(capfd, ["check", str(folder), "--scheduler", "tcp://127.0.0.1:1", "--jobs", "2"])
    assert code == 2 and "give one of them" in err


def test_a_worker_that_dies_costs_its_file_one_row(cluster, tmp_path, capfd):
    # runs last: the killed worker is restarted by its nanny, which takes a few seconds
    d = tmp_path / "hw"
    d.mkdir()
    (d / "kills_worker.py").write_text("import os, signal\nos.kill(os.getppid(), signal.SIGKILL)\n")
    (d / "plain.py").write_text("x = 1\n")
    code, out, err = _run(capfd, ["check", str(d), "--scheduler", cluster[0].scheduler_address, "--timeout", str(TIMEOUT), "--quiet"])
    assert code == 1  # a worker killed by its file costs that file one failed row
    rows = {ln.split()[0].rsplit("/", 1)[-1]: ln for ln in out.splitlines() if ".py" in ln}
    assert "CRASHED" in rows["kills_worker.py"] and "worker" in rows["kills_worker.py"]
    assert "NO-MODEL" in rows["plain.py"]


def test_dask_is_imported_only_when_a_cluster_is_used():
    import subprocess
    import sys

    code = ("import sys, hamcheck, hamcheck.cli, hamcheck.sweeps, hamcheck.virasoro.stability, hamcheck.distributed\n"
            "hamcheck.cli.build_parser()\n"
            "print(sorted(m for m in sys.modules if m.split('.')[0] in ('dask', 'distributed')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"
