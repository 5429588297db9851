"""Virasoro speed targets (issue 4): prints a table of medians and ratios; asserts nothing.

1. Monodromy, class and rotation number of a Hill potential with 256 Fourier
   modes to 1e-10: target well under a second.
2. Closedness of the orbit chart with 32 modes (dim 64) at 16 points, with
   randomized pairs and with the full derivative tensor: target seconds.

Run: python benchmarks/bench_virasoro.py [--repeats N]
"""

from __future__ import annotations

import argparse
import statistics
import time
import warnings

import numpy as np

import hamcheck
from hamcheck import circle, virasoro
from hamcheck.virasoro.hill import _class_of


def timed(fn, repeats):
    times, out = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), out


def potential_256(seed=0):
    """An invented 'harbour swell' potential: 256 modes with exponentially decaying amplitudes."""
    rng = np.random.default_rng(seed)
    n = np.arange(1, 257)
    amp = np.exp(-n / 48.0)
    return circle.Periodic.from_real_modes(n, amp * rng.standard_normal(256), amp * rng.standard_normal(256), a0=1.7)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=5)
    args = ap.parse_args(argv)
    rows = []

    T = potential_256()

    def invariants():
        m = virasoro.monodromy(T, 1.0, tol=1e-12)
        P = m.fundamental()
        return m, _class_of(m), virasoro.rotation_number(m, P)

    t_inv, (m, cls, rho) = timed(invariants, args.repeats)
    ref = virasoro.monodromy(T, 1.0, min_steps=4 * m.steps)  # 4x the steps: error ~ 4^-6 of ours
    err = float(np.abs(m.matrix - ref.matrix).max() / np.abs(ref.matrix).max())
    rows.append(("monodromy+class+rho, 256 modes", t_inv, 1.0, f"{cls}, rho={rho:g}, steps={m.steps}, rel.err={err:.1e}"))
    t_mono, _ = timed(lambda: virasoro.monodromy(T, 1.0), args.repeats)
    rows.append(("monodromy only, 256 modes", t_mono, t_mono / t_inv, ""))

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = virasoro.orbit_model(0.1, 1.0, list(range(1, 33)))
    for label, setting in (
        ("closed, 32 modes, 16 pts, random pairs", hamcheck.Settings(full_tensor_max_dim=16, search_starts=0)),
        ("closed, 32 modes, 16 pts, full tensor", hamcheck.Settings(full_tensor_max_dim=64, search_starts=0)),
    ):
        reps = max(1, args.repeats // 2)
        t, rep = timed(lambda: hamcheck.check(model, points=16, only=["closed"], settings=setting), reps)
        r = rep.results["closed"]
        rows.append((label, t, t / t_inv, f"{r.status}, residual {r.residual:.1e} (grid {model.construction.grid}, incl. compile)"))

    w = max(len(r[0]) for r in rows)
    print(f"{'case':<{w}}  {'median s':>9}  {'ratio':>9}  note")
    for label, t, ratio, note in rows:
        print(f"{label:<{w}}  {t:9.3f}  {ratio:9.1f}  {note}")


if __name__ == "__main__":
    main()
