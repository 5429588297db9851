"""Benchmark of hamcheck.hyperbolic: method B per configuration, method A's cost per digit, a two-cone chart.

    python benchmarks/bench_hyperbolic.py [--chart 40] [--jobs 2]

Prints tables of medians (seconds); machines are noisy, compare within one run.
"""

import argparse
import math
import os
import statistics
import time

import numpy as np

from hamcheck import hyperbolic


def method_b(configs, repeat=3):
    rows = []
    for cones in configs:
        ts = []
        for _ in range(repeat):
            t = time.perf_counter()
            sol = hyperbolic.solve_accessory(cones)
            m = hyperbolic.cone_metric(cones)
            T = hyperbolic.boundary_potential(m, 1.0)
            ts.append(time.perf_counter() - t)
        rows.append((cones, statistics.median(ts), T.error, sol.residual))
    return rows


def method_a(cones, grids):
    ref = hyperbolic.solve_accessory(cones).b
    rows = []
    for g in grids:
        t = time.perf_counter()
        sol = hyperbolic.solve_liouville(cones, *g)
        b, _ = hyperbolic.residues_from_u(sol.u, cones)
        rows.append((g, time.perf_counter() - t, float(np.abs(b - ref).max())))
    return rows


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--chart", type=int, default=40)
    ap.add_argument("--jobs", type=int, default=2)
    args = ap.parse_args()
    print(f"load average at start: {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
    configs = [[(-0.4, 0.6 * 2 * math.pi), (0.4, 0.6 * 2 * math.pi)],
               [(-0.3 + 0.2j, 2.5), (0.35, 4.0)],
               [(0.1 + 0.5j, 3.0), (-0.6, 2.0)]]
    print("\nmethod B: two cone points, boundary potential (M = 256) to its estimated error")
    print("| cones | seconds (median of 3) | T error estimate | monodromy imag. part |")
    print("|---|---|---|---|")
    for cones, t, e, r in method_b(configs):
        print(f"| {[(complex(p), round(a, 3)) for p, a in cones]} | {t:.3f} | {e:.1e} | {r:.1e} |")
    print("\nmethod A: residues against method B, Newton + dense collocation")
    print("| grid (N, M) | unknowns | seconds | max error of b | digits |")
    print("|---|---|---|---|---|")
    rows = method_a(configs[0], [(21, 32), (29, 44), (41, 64), (57, 88)])
    for g, t, e in rows:
        print(f"| {g} | {(g[0] - 1) // 2 * g[1]} | {t:.2f} | {e:.1e} | {-math.log10(e):.1f} |")
    (g0, t0, e0), (g1, t1, e1) = rows[0], rows[-1]
    print(f"cost per digit (first to last grid): {(t1 - t0) / math.log10(e0 / e1):.2f} s per digit; "
          f"time grows like N^{math.log(t1 / t0) / math.log(g1[0] / g0[0]):.1f}, error like N^-{math.log(e0 / e1) / math.log(g1[0] / g0[0]):.1f}")
    n = args.chart
    angles = np.linspace(0.05, 0.95, n) * 2 * math.pi
    seps = np.linspace(0.02, 0.8, n)
    t = time.perf_counter()
    ch = hyperbolic.two_cone_chart(angles, seps, jobs=args.jobs)
    dt = time.perf_counter() - t
    os.makedirs("benchmarks/out", exist_ok=True)
    ch.to_json("benchmarks/out/two_cone_chart.json")
    ch.plot("benchmarks/out/two_cone_chart.png")
    print(f"\n{n} x {n} two-cone chart, {args.jobs} jobs: {dt:.1f} s ({dt / 60:.2f} min, {dt / n / n * 1e3:.0f} ms per cell); "
          f"classes {ch.counts()}")


if __name__ == "__main__":
    main()
