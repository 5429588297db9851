"""Benchmark: localization of CP^2 and of a 6-dim U(3) orbit, fixed points of CP^5, polygon-space volumes.

Prints a table of medians over repeats (wall time includes compilation on the
first repeat, reported separately). Run: python benchmarks/bench_consequences.py
"""

import math
import statistics
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))
sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "models"))

import hamcheck  # noqa: E402
from hamcheck.orbits import coadjoint_orbit, unitary_flag_chart  # noqa: E402
from test_fixed_points import cpn  # noqa: E402
from test_orbits import components, un  # noqa: E402
import polygons  # noqa: E402

REPEATS = 3


def timed(fn):
    times, out = [], None
    for _ in range(REPEATS):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return out, times[0], statistics.median(times[1:])


def main():
    rows = []
    cp2 = cpn(2)
    loc, first, med = timed(lambda: hamcheck.localization(cp2, [0.37, -1.21], 1.0, rtol=1e-6, starts=16))
    rows.append(("CP^2 localization (cubature, rtol 1e-6)", f"{loc.relative_difference:.1e}", f"{loc.error:.1e}", first, med))
    u3 = un(3)
    b = (1.0, 0.3, -1.3)
    orbit = coadjoint_orbit(u3, components(u3, np.diag(b)), chart=unitary_flag_chart(3))
    xi = np.array([-0.5, 0.2, 0.3, 0, 0, 0, 0, 0, 0])
    loc3, first3, med3 = timed(lambda: hamcheck.localization(orbit, xi, 1.0, samples=2**15, starts=48))
    rows.append((f"U(3) orbit dim 6 (QMC 8 x 2^15), {len(loc3.fixed_points)} fixed pts",
                 f"{loc3.relative_difference:.1e}", f"{loc3.error / abs(loc3.integral):.1e}", first3, med3))
    cp5 = cpn(5)
    fps, first5, med5 = timed(lambda: hamcheck.fixed_points(cp5, [0.31, -0.72, 1.13, 0.55, -1.41], starts=64))
    rows.append((f"CP^5 fixed points: {len(fps)} of 6 found", "-", "-", first5, med5))
    # Kapovich-Millson 1996 (from memory): 3 pi and 10 pi^2
    for radii, ref, label in (([1.0, 1.4, 0.8, 1.1], 3 * math.pi, "quadrilateral"), ([1.0] * 5, 10 * math.pi ** 2, "pentagon")):
        red, f, m = timed(lambda: hamcheck.reduce(polygons.build(radii), [0.0, 0.0, 0.0]))
        rows.append((f"SO(3) reduced volume, {label} space (dim {red.dim})", f"{abs(red.volume - ref) / ref:.1e}",
                     f"{red.volume_error / ref:.1e}", f, m))
    print(f"{'case':58s} {'rel diff':>9s} {'rel err':>9s} {'first s':>8s} {'median s':>9s}")
    for name, d, e, f, m in rows:
        print(f"{name:58s} {d:>9s} {e:>9s} {f:8.2f} {m:9.2f}")
    print(f"(U(3) Macdonald volume check: {(2 * math.pi) ** 3 * 0.7 * 2.3 * 1.6 / 2:.6g})")


if __name__ == "__main__":
    main()
