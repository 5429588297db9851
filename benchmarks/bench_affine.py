"""Timings of hamcheck.loop_groups: holonomy, stabilizers, orbit-chart checks.

Prints tables of medians (and ratios to the smallest case). Run:

    python benchmarks/bench_affine.py [--repeat 3]

Nothing here asserts on time; the numbers go into the report.
"""

from __future__ import annotations

import argparse
import statistics
import time

import numpy as np

import hamcheck
from hamcheck import loop_groups as af
from hamcheck.loop_groups.connections import _random_loop


def median_time(fn, repeat):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), out


def smooth_connection(modes, M, rng):
    """A connection with ``modes`` Fourier modes, amplitudes decaying like 1/n^2."""
    th = af.grid(M)
    A = np.zeros((M, 3))
    for n in range(modes + 1):
        A += np.cos(n * th)[:, None] * rng.standard_normal(3) / (1 + n) ** 2
        A += np.sin(n * th)[:, None] * rng.standard_normal(3) / (1 + n) ** 2
    return A


def holonomy_table(repeat):
    rng = np.random.default_rng(0)
    print("holonomy of a smooth SU(2) connection (c = 1), tol 1e-12")
    print(f"{'modes':>6} {'M':>6} {'steps':>7} {'median s':>10} {'ratio':>7} {'err est':>9} {'|Hol(g.A) - g Hol g^-1|':>24}")
    base = None
    for modes in (8, 32, 128, 256):
        M = 4 * modes
        A = smooth_connection(modes, M, rng)
        t, H = median_time(lambda: af.holonomy(A, 1.0), repeat)
        g = _random_loop(af.SU2, rng, M, scale=0.3)
        Hg = af.holonomy(af.gauge_action(g, A, 1.0), 1.0).matrix
        cov = np.abs(Hg - af.SU2.conj(g.values[0], H.matrix)).max()
        base = base or t
        print(f"{modes:>6} {M:>6} {H.steps:>7} {t:>10.4f} {t / base:>7.1f} {H.error:>9.1e} {cov:>24.1e}")


def stabilizer_table(repeat):
    rng = np.random.default_rng(1)
    print("\nstabilizer dimension of g.(a e_3), a/c = 1 (dimension 3), two ways")
    print(f"{'M':>6} {'fourier modes':>14} {'fourier s':>10} {'transport s':>12} {'dims':>6}")
    for M in (32, 64, 128):
        g = _random_loop(af.SU2, rng, M, scale=0.3)
        A = af.gauge_action(g, af.constant_connection(1.0, M), 1.0)
        tf, f = median_time(lambda: af.stabilizer_dimension_fourier(A, 1.0), repeat)
        tt, t_ = median_time(lambda: af.stabilizer_dimension_transport(A, 1.0), repeat)
        print(f"{M:>6} {f['modes']:>14} {tf:>10.4f} {tt:>12.4f} {f['dimension']:>3}/{t_['dimension']}")


def orbit_table():
    print("\norbit chart checks (hamcheck.check, 16 points, all checks; compile included, run once)")
    print(f"{'modes':>6} {'dim':>5} {'grid':>5} {'build s':>8} {'check s':>8} {'closed':>9} {'moment':>9} {'passed':>7}")
    for K in (1, 3, 5):
        t0 = time.perf_counter()
        m = af.orbit_model(0.3, 1.0, K)
        t1 = time.perf_counter()
        r = hamcheck.check(m, points=16, settings=hamcheck.Settings(search_starts=0))
        t2 = time.perf_counter()
        print(
            f"{K:>6} {m.dim:>5} {m.construction.grid:>5} {t1 - t0:>8.2f} {t2 - t1:>8.2f} {r.results['closed'].residual:>9.1e} "
            f"{r.results['moment_map'].residual:>9.1e} {str(r.passed):>7}"
        )


def resolution_table():
    print("\nresolution study across the quadrature grid (modes 0..2, |x| ~ 0.9, 4 points)")
    t0 = time.perf_counter()
    s = af.orbit_resolution_study(0.3, 1.0, 2, grids=(8, 16, 24, 32, 48), points=4)
    print(s.table())
    print(f"({time.perf_counter() - t0:.2f} s, one hamcheck.check (one compilation) per grid)")
    try:
        print("plot:", s.plot("bench_affine_resolution.png"))
    except hamcheck.UsageError as exc:
        print(exc)


def main():
    p = argparse.ArgumentParser()
    p.add_argument("--repeat", type=int, default=3)
    p.add_argument("--skip-orbits", action="store_true", help="only the numpy parts")
    args = p.parse_args()
    holonomy_table(args.repeat)
    stabilizer_table(args.repeat)
    if not args.skip_orbits:
        orbit_table()
        resolution_table()


if __name__ == "__main__":
    main()
