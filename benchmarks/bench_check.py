"""How long a check takes: CP^n against its form, the first verdict of the CLI, 1 core against 2.

Prints three tables in one run (medians; ratios measured in the same run, since
the machine is shared and noisy):

1. CP^n with the torus action, n = 1 .. 256 (dim 2 .. 512), each size in a fresh
   process: compile time of the first ``check()`` (compile and first run), the median run time of further
   complete checks on the same model (the compiled programs are reused; the
   degenerate-point search and the diagnoses included), the median time of one
   batched evaluation of the form on the same points (jit + vmap), and their
   ratio. Target (speed issue): dim 512 at 64 points in at most 5 s and at most
   15 times the batched form evaluation.
2. ``hamcheck check models/sphere.py`` in a fresh process, wall time to the
   verdict, over the bare jax start-up
   (``python -c "import jax, jax.numpy as jnp; (jnp.ones(3) + 1).block_until_ready()"``),
   cold (empty ``HAMCHECK_CACHE_DIR`` in a temporary folder) and with the cache
   kept (and with jax's cache alone, the program store emptied). Targets: at most 2.5x cold
   and 1.6x warm.
3. The run time of a compiled check on 1 core (``taskset -c 0``) and on 2 cores
   (``taskset -c 0,1``), each in a fresh process with a warm cache.

    python benchmarks/bench_check.py [--sizes 1 2 4 ...] [--points 64] [--repeat 3] [--skip-cli] [--skip-cores]
"""

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
BARE_JAX = "import jax, jax.numpy as jnp; (jnp.ones(3) + 1).block_until_ready()"
# one compiled check, timed inside a child process (for the cores table)
CORES_CHILD = """
import sys, time, statistics
sys.path.insert(0, {models!r})
sys.path.insert(0, {bench!r})
import hamcheck, bench_check
model = bench_check.torus_model({n})
hamcheck.check(model, points={points})
times = []
for seed in range({repeat}):
    t = time.perf_counter(); hamcheck.check(model, points={points}, seed=seed + 1); times.append(time.perf_counter() - t)
print(statistics.median(times))
"""


def median_time(fn, repeat):
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def wall(cmd, env=None, repeat=1):
    """Median wall time of a command run ``repeat`` times (output discarded; a failure stops the benchmark)."""
    def once():
        subprocess.run(cmd, cwd=ROOT, env=env, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)

    return median_time(once, repeat)


def torus_model(n):
    """CP^n in its main affine chart alone, with the n-torus (``projective_space.torus(n)`` without its atlas:
    building n + 1 charts is what costs at n = 256, and a check uses only the main chart). The algebra comes
    from ``LieAlgebra.from_matrices`` (sparse commutators: seconds at n = 256)."""
    import jax.numpy as jnp
    import numpy as np

    sys.path.insert(0, str(ROOT / "models"))
    import projective_space

    import hamcheck

    basis = np.zeros((n, 2 * n, 2 * n))
    for k in range(n):
        basis[k, k, n + k], basis[k, n + k, k] = -1.0, 1.0  # as in projective_space.torus
    algebra = hamcheck.LieAlgebra.from_matrices(basis, names=[f"t{k + 1}" for k in range(n)])

    def moment(x):
        w2 = x[:n] ** 2 + x[n:] ** 2
        return -w2 / (2 * (1 + jnp.sum(w2)))

    return hamcheck.Model(f"CP{n}-torus", 2 * n, form=projective_space.fubini_study, algebra=algebra,
                          moment=moment, action=lambda g, x: g @ x)


# one row of the CP^n table, in a process of its own: one size's compiled programs never weigh on the
# next (all sizes in one process ran out of 24 GiB at dim 512, where that size alone peaks at 5.5 GB)
ROW_CHILD = """
import sys
sys.path.insert(0, {bench!r})
import bench_check
bench_check.cpn_row({n}, {points}, {repeat})
"""


def cpn_table(sizes, points, repeat):
    import jax

    import hamcheck

    print(f"CP^n torus model, {points} points, medians of {repeat}, each size in a fresh process; jax {jax.__version__}, "
          f"{len(os.sched_getaffinity(0))} core(s), workers {hamcheck.checks.run.workers_available(hamcheck.Settings())}")
    print(f"| {'n':>4} | {'dim':>4} | {'compile s':>9} | {'run s':>7} | {'form eval s':>11} | {'ratio':>6} | passed |")
    print("|---:|---:|---:|---:|---:|---:|---|", flush=True)
    for n in sizes:
        code = ROW_CHILD.format(bench=str(ROOT / "benchmarks"), n=n, points=points, repeat=repeat)
        out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, env=dict(os.environ, PYTHONPATH=str(ROOT)),
                             capture_output=True, text=True)
        rows = [line for line in out.stdout.splitlines() if line.startswith("|")]
        if out.returncode != 0 or not rows:
            print(f"| {n:>4} | {2 * n:>4} | (the child process ended with code {out.returncode}: "
                  f"{(out.stderr.strip().splitlines() or ['no message'])[-1][:120]}) |", flush=True)
            continue
        print(rows[-1], flush=True)


def cpn_row(n, points, repeat):
    """Print one row of the CP^n table (run by ``cpn_table`` in a child process)."""
    import jax
    import jax.numpy as jnp
    import numpy as np

    import hamcheck

    model = torus_model(n)
    xs = jnp.asarray(np.random.default_rng(0).standard_normal((points, 2 * n)))
    form_batch = jax.jit(jax.vmap(model.form_at))
    jax.block_until_ready(form_batch(xs))  # compile outside the timing
    t_form = median_time(lambda: jax.block_until_ready(form_batch(xs)), max(repeat, 5))
    t0 = time.perf_counter()
    report = hamcheck.check(model, points=points)
    t_first = time.perf_counter() - t0
    t_run = median_time(lambda: hamcheck.check(model, points=points, seed=1), repeat)
    print(f"| {n:>4} | {2 * n:>4} | {t_first - t_run:>9.2f} | {t_run:>7.3f} | {t_form:>11.5f} | "
          f"{t_run / t_form:>6.1f} | {report.passed} |", flush=True)


def cli_table(repeat):
    python = sys.executable
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    bare = wall([python, "-c", BARE_JAX], env, repeat)
    cmd = [python, "-m", "hamcheck", "check", "models/sphere.py"]
    cold_times, warm_times, jax_only_times = [], [], []
    for _ in range(repeat):
        folder = tempfile.mkdtemp(prefix="hamcheck-bench-cache-")
        try:
            run_env = dict(env, HAMCHECK_CACHE_DIR=folder)
            cold_times.append(wall(cmd, run_env))
            warm_times.append(wall(cmd, run_env))
            # jax's persistent cache alone: programs are traced and lowered to be looked up
            shutil.rmtree(os.path.join(folder, "programs"), ignore_errors=True)
            jax_only_times.append(wall(cmd, run_env))
        finally:
            shutil.rmtree(folder, ignore_errors=True)
    cold, warm = statistics.median(cold_times), statistics.median(warm_times)
    jax_only = statistics.median(jax_only_times)
    print(f"\nhamcheck check models/sphere.py, medians of {repeat} fresh processes")
    print("| run | wall s | over bare jax start-up | target |")
    print("|---|---:|---:|---:|")
    print(f"| bare jax start-up | {bare:.2f} | 1.00 | |")
    print(f"| cold (empty cache) | {cold:.2f} | {cold / bare:.2f} | 2.5 |")
    print(f"| cache kept | {warm:.2f} | {warm / bare:.2f} | 1.6 |")
    print(f"| cache kept, program store emptied (jax's cache only) | {jax_only:.2f} | {jax_only / bare:.2f} | |", flush=True)


def cores_table(n, points, repeat):
    if shutil.which("taskset") is None or len(os.sched_getaffinity(0)) < 2:
        print("\n(1- vs 2-core table skipped: needs taskset and 2 cores)")
        return
    code = CORES_CHILD.format(models=str(ROOT / "models"), bench=str(ROOT / "benchmarks"), n=n, points=points, repeat=repeat)
    env = dict(os.environ, PYTHONPATH=str(ROOT))  # the cache folder of the CP^n table: compiled once, then kept
    got = {}
    for cores in ("0", "0,1"):
        out = subprocess.run(["taskset", "-c", cores, sys.executable, "-c", code], cwd=ROOT, env=env,
                             check=True, capture_output=True, text=True)
        got[cores] = float(out.stdout.strip().splitlines()[-1])
    print(f"\nCP^{n} (dim {2 * n}), {points} points, compiled check, median of {repeat}")
    print("| cores | run s | speed-up |")
    print("|---|---:|---:|")
    print(f"| 1 (taskset -c 0) | {got['0']:.3f} | 1.00 |")
    print(f"| 2 (taskset -c 0,1) | {got['0,1']:.3f} | {got['0'] / got['0,1']:.2f} |", flush=True)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--sizes", type=int, nargs="+", default=[1, 2, 4, 8, 16, 32, 64, 128, 256])
    ap.add_argument("--points", type=int, default=64)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--cores-n", type=int, default=64, help="CP^n of the 1- vs 2-core table")
    ap.add_argument("--skip-cli", action="store_true")
    ap.add_argument("--skip-cores", action="store_true")
    ap.add_argument("--keep-cache", action="store_true", help="CP^n table with the user's compilation cache")
    args = ap.parse_args()
    os.system("uptime")
    folder = None
    if not args.keep_cache:  # compile times from an empty persistent cache (hamcheck is imported below)
        folder = tempfile.mkdtemp(prefix="hamcheck-bench-cache-")
        os.environ["HAMCHECK_CACHE_DIR"] = folder
    try:
        cpn_table(args.sizes, args.points, args.repeat)
        if not args.skip_cli:
            cli_table(args.repeat)
        if not args.skip_cores:
            cores_table(args.cores_n, args.points, args.repeat)
    finally:
        if folder is not None:
            shutil.rmtree(folder, ignore_errors=True)


if __name__ == "__main__":
    main()
