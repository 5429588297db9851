"""Scale-out speed (issue 12): prints one table of times and ratios; asserts nothing.

1. A batch of bundled-model files (16 by default: copies of sphere, oscillator,
   half_plane, cotangent), each isolated in its own child process:
   sequentially, with ``--jobs 2`` (hamcheck's own pool of child processes),
   on an embedded 2-worker Dask LocalCluster (cluster start included: what
   ``--jobs 2`` would cost on Dask), and on a running 2-worker cluster reached
   by its address (as ``--scheduler ADDRESS``; connecting included).
2. A sweep of a model family (CP^2 with its form scaled by s, 8 values): every
   member checked by its own ``hamcheck.check`` call, against ``hamcheck.sweep``,
   whose members share compiled programs (the float parameter s is traced).
3. A stability chart of Mathieu's potential ``a - 2q cos 2theta`` (c = 1) on a
   100 x 100 grid: in this process, and on 1- and 2-worker clusters.

The persistent compilation cache is switched off (``HAMCHECK_CACHE_DIR=``) so
every run compiles, as a fresh batch does; a run is one measurement (the batch
takes minutes), so compare ratios from one run on a quiet machine.

Run: python benchmarks/bench_distributed.py [--files 16] [--points 8] [--grid 100] [--members 8]
"""

from __future__ import annotations

import argparse
import os
import shutil
import tempfile
import time
from pathlib import Path

os.environ["HAMCHECK_CACHE_DIR"] = ""  # before hamcheck is imported: children and workers inherit it

import numpy as np  # noqa: E402

from hamcheck.batch import Options, collect_files, run_isolated  # noqa: E402
from hamcheck.distributed import client_for, connect, local_cluster, run_batch  # noqa: E402
from hamcheck.virasoro.stability import stability_chart  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
BUNDLED = ["sphere", "oscillator", "half_plane", "cotangent"]


def mathieu(q, a):
    return lambda th: a - 2 * q * np.cos(2 * th)


def timed(fn):
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def batch_rows(n_files, points):
    folder = Path(tempfile.mkdtemp(prefix="hamcheck-bench-"))
    try:
        for i in range(n_files):
            name = BUNDLED[i % len(BUNDLED)]
            shutil.copy(ROOT / "models" / f"{name}.py", folder / f"{i:02d}_{name}.py")
        files = collect_files([folder])
        seq_opts, par_opts = Options(points=points), Options(points=points, jobs=2)
        quiet = lambda line: None  # noqa: E731
        rows, verdicts = [], {}
        t, run = timed(lambda: run_isolated(files, seq_opts, warn=quiet))
        rows.append(("batch", f"{n_files} files, sequential (--isolate)", t, None))
        verdicts["sequential"] = [(o.model, o.status) for o in run.outcomes]
        base = t
        t, run = timed(lambda: run_isolated(files, par_opts, warn=quiet))
        rows.append(("batch", f"{n_files} files, --jobs 2 (own pool)", t, base / t))
        verdicts["jobs"] = [(o.model, o.status) for o in run.outcomes]

        def embedded():
            with client_for(workers=2) as client:
                return run_batch(files, seq_opts, client, warn=quiet)

        t, run = timed(embedded)
        rows.append(("batch", f"{n_files} files, embedded 2-worker LocalCluster (start included)", t, base / t))
        verdicts["embedded"] = [(o.model, o.status) for o in run.outcomes]
        with local_cluster(2) as cluster:
            def by_address():
                client = connect(cluster.scheduler_address)
                try:
                    return run_batch(files, seq_opts, client, warn=quiet)
                finally:
                    client.close()

            t, run = timed(by_address)
        rows.append(("batch", f"{n_files} files, 2-worker cluster by address", t, base / t))
        verdicts["address"] = [(o.model, o.status) for o in run.outcomes]
        same = all(v == verdicts["sequential"] for v in verdicts.values())
        passed = sum(s == "pass" for _, s in verdicts["sequential"])
        return rows, f"same verdicts in every batch run: {'yes' if same else 'NO'} ({passed} of {len(verdicts['sequential'])} models pass)"
    finally:
        shutil.rmtree(folder, ignore_errors=True)


def sweep_rows(members, points):
    import importlib.util

    import hamcheck

    spec = importlib.util.spec_from_file_location("cp_models", ROOT / "models" / "projective_space.py")
    cp = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(cp)

    def family(s):  # CP^2, form and moment map scaled by s
        return cp.torus(2, scale=s)

    values = [float(v) for v in np.linspace(0.5, 4.0, members)]
    each = []
    for s in values:
        t, report = timed(lambda: hamcheck.check(family(s), points=points))
        assert report.passed
        each.append(t)
    t_sweep, table = timed(lambda: hamcheck.sweep(family, {"s": values}, points=points))
    assert table.passed
    per = [r.seconds for r in table]
    return [
        ("sweep", f"{members} CP^2 members, one check() each (median {np.median(each):.2f} s per member)", sum(each), None),
        ("sweep", f"the same as one sweep, programs shared (first {per[0]:.2f} s, then median {np.median(per[1:]):.2f} s)",
         t_sweep, sum(each) / t_sweep),
    ]


def chart_rows(n):
    import distributed

    q, a = np.linspace(0, 20, n), np.linspace(-10, 40, n)
    rows = []
    t, local = timed(lambda: stability_chart(mathieu, q, a))
    rows.append(("chart", f"{n} x {n} Mathieu chart, in this process", t, n * n / t))
    for workers in (1, 2):
        with local_cluster(workers) as cluster, distributed.Client(cluster, set_as_default=False) as client:
            t, chart = timed(lambda: stability_chart(mathieu, q, a, client=client))
        assert (chart.classes == local.classes).all()
        rows.append(("chart", f"{n} x {n} Mathieu chart, {workers}-worker cluster ({chart.tasks} tasks)", t, n * n / t))
    return rows


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--files", type=int, default=16)
    ap.add_argument("--points", type=int, default=8)
    ap.add_argument("--grid", type=int, default=100)
    ap.add_argument("--members", type=int, default=8)
    ap.add_argument("--skip-batch", action="store_true")
    ap.add_argument("--skip-chart", action="store_true")
    args = ap.parse_args()
    rows, note = [], ""
    if not args.skip_batch:
        rows, note = batch_rows(args.files, args.points)
    rows += sweep_rows(args.members, args.points)
    if args.skip_chart:
        chart = []
    else:
        chart = chart_rows(args.grid)
    one = next((r[2] for r in chart if "1-worker" in r[1]), None)
    print(f"| what | run | seconds | speed-up |\n|---|---|---|---|")
    for kind, label, t, ratio in rows:
        print(f"| {kind} | {label} | {t:.1f} | {'1.00' if ratio is None else f'{ratio:.2f}'} |")
    for kind, label, t, rate in chart:
        speed = f"{one / t:.2f} vs 1 worker" if "worker" in label else "-"
        print(f"| {kind} | {label} | {t:.2f} | {speed}; {rate:,.0f} classifications/s |")
    if note:
        print(note)
    print(f"machine: {os.cpu_count()} cores, load average {os.getloadavg()[0]:.1f} at the end (shared machine)")


if __name__ == "__main__":
    main()
