"""Cost of a full check of CP^n (torus action) against evaluating its form, n = 1..256.

Prints one table: per n, the compile-and-run time of the first check() call,
the median time of further complete check() calls on the same model (the
compiled program is reused; the nondegeneracy search and diagnoses included),
the median time of evaluating form() on the same
batch (jit + vmap), and their ratio. Target (issue 2): dim 512 at 64 points
in under 10 s after compilation on 2 cores, and a ratio that stays flat (not
cubic) in dim.

    python benchmarks/bench_check.py [--sizes 1 2 4 ...] [--points 64] [--repeat 3]
"""

import argparse
import statistics
import sys
import time
from pathlib import Path

import jax
import jax.numpy as jnp
import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "models"))
import projective_space  # noqa: E402

import hamcheck  # noqa: E402


def median_time(fn, repeat):
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--sizes", type=int, nargs="+", default=[1, 2, 4, 8, 16, 32, 64, 128, 256])
    ap.add_argument("--points", type=int, default=64)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    print(f"CP^n torus model, {args.points} points, medians of {args.repeat}; jax {jax.__version__}, "
          f"{jax.device_count()} CPU device(s)")
    print(f"{'n':>4} {'dim':>5} {'first check s':>14} {'check s':>9} {'form eval s':>12} {'ratio':>9}  "
          f"{'closedness':>10}  passed")
    for n in args.sizes:
        model = projective_space.torus(n)
        xs = jnp.asarray(np.random.default_rng(0).standard_normal((args.points, 2 * n)))
        form_batch = jax.jit(jax.vmap(model.form_at))
        jax.block_until_ready(form_batch(xs))  # compile outside the timing
        t_form = median_time(lambda: jax.block_until_ready(form_batch(xs)), max(args.repeat, 5))
        t0 = time.perf_counter()
        report = hamcheck.check(model, points=args.points)
        t_first = time.perf_counter() - t0
        # later calls reuse the program compiled for this model (cached on the model)
        t_run = median_time(lambda: hamcheck.check(model, points=args.points), args.repeat)
        settings = hamcheck.Settings()
        mode = "full" if 2 * n <= settings.full_tensor_max_dim else "pairs"
        print(f"{n:>4} {2 * n:>5} {t_first:>14.2f} {t_run:>9.3f} {t_form:>12.5f} {t_run / t_form:>9.1f}  "
              f"{mode:>10}  {report.passed}", flush=True)


if __name__ == "__main__":
    main()
