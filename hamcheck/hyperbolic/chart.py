"""A chart of outcomes for two cone points: the Virasoro class over (cone angle, separation).

Both cones have angle alpha and sit at ``-s`` and ``+s`` (Euclidean); method B
gives q (each cell starting from its neighbour at the next larger s), and the class,
trace, rotation number and constant representative come from the Hill monodromy of
the boundary potential (the stabilizers of the full classification are skipped).

>>> ch = two_cone_chart([2.0], [0.3], jobs=1)   # sharp cones far apart in g: |trace| ~ 23
>>> ch.classes[0][0]
'hyperbolic'
"""

from __future__ import annotations

import json
import math
import time
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field

import numpy as np

from ..errors import UsageError

CLASS_CODES = {"elliptic": 0, "parabolic+": 1, "parabolic-": 1, "hyperbolic": 2, "+identity": 3, "-identity": 3}


def _cell(alpha, s, c, M, start=None):
    from .. import virasoro
    from .accessory import solve_accessory
    from .boundary import boundary_potential
    from .metric import Metric

    try:
        sol = solve_accessory([(-s, alpha), (s, alpha)], start=start)
    except Exception as exc:  # one unsolved cell must not sink the chart
        return {"class": "unsolved", "note": f"{type(exc).__name__}: {exc}"}
    m = Metric(lambda x, y: 0.0 * x, sol.cones, sol.q, "cell", construction=_Wrap(sol))
    T = boundary_potential(m, c, M)
    # the chart needs class, trace and rotation number, not the stabilizers (which cost 4x more)
    mono = virasoro.monodromy(np.asarray(T), c)
    cls = monodromy_class(mono)
    rho = virasoro.rotation_number(mono)
    T0, _ = virasoro.constant_representative(cls, rho, mono.trace, mono.matrix, c)
    return {"class": cls, "trace": mono.trace, "rotation_number": rho, "constant_representative": T0,
            "boundary_error": T.error, "monodromy_error": mono.error, "residual": sol.residual,
            "b": [float(sol.b[0].real), float(sol.b[1].real)]}


def monodromy_class(mono) -> str:
    """elliptic / parabolic+- / +-identity / hyperbolic from a :class:`hamcheck.virasoro.Monodromy`,
    with the tolerance rule of :data:`hamcheck.virasoro.TOLERANCES.trace_class` (decided no finer than the monodromy is known)."""
    from .. import virasoro

    Mx, t = mono.matrix, mono.trace
    scale = max(np.abs(Mx).max(), 1.0)
    tol = virasoro.TOLERANCES.trace_class * scale + 1e3 * mono.error * scale
    for sgn, name in ((1, "+"), (-1, "-")):
        if abs(t - 2 * sgn) <= tol:
            return f"{name}identity" if np.abs(Mx - sgn * np.eye(2)).max() <= tol else f"parabolic{name}"
    return "elliptic" if abs(t) < 2 else "hyperbolic"


@dataclass(frozen=True)
class _Wrap:
    accessory: object


def _row(args):
    """One angle, separations from the largest down: each cell starts from its neighbour's residues."""
    alpha, seps, c, M = args
    out, start = {}, None
    for s in sorted(seps, reverse=True):
        cell = _cell(alpha, s, c, M, start)
        out[s] = cell
        start = cell["b"] if "b" in cell else None
    return [out[s] for s in seps]


@dataclass(frozen=True)
class Chart:
    """Outcomes on the grid ``angles x separations`` (rows: angles)."""

    angles: tuple
    separations: tuple
    cells: tuple = field(repr=False)
    c: float = 1.0
    seconds: float = 0.0
    jobs: int = 1

    @property
    def classes(self):
        return [[cell["class"] for cell in row] for row in self.cells]

    def counts(self) -> dict:
        out = {}
        for row in self.classes:
            for k in row:
                out[k] = out.get(k, 0) + 1
        return out

    def to_dict(self) -> dict:
        from ..report import _plain

        return _plain({"angles": self.angles, "separations": self.separations, "c": self.c, "seconds": self.seconds,
                       "layout": "cones (-s, alpha) and (+s, alpha); cells[i][j] for angles[i], separations[j]",
                       "cells": self.cells})

    def to_json(self, path) -> str:
        with open(path, "w", encoding="utf-8") as fh:
            json.dump(self.to_dict(), fh, indent=1)
        return str(path)

    def plot(self, path, title=None) -> str:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
        from matplotlib.colors import ListedColormap

        codes = np.array([[CLASS_CODES.get(k, np.nan) for k in row] for row in self.classes], float)
        tr = np.array([[cell.get("trace", np.nan) for cell in row] for row in self.cells], float)
        fig, ax = plt.subplots(figsize=(6.4, 5.2))
        a = np.asarray(self.angles) / (2 * np.pi)
        s = np.asarray(self.separations)
        cmap = ListedColormap(["#4c9be8", "#222222", "#e8834c", "#7bc96f"])
        ax.pcolormesh(s, a, codes, cmap=cmap, vmin=-0.5, vmax=3.5, shading="nearest")
        cs = ax.contour(s, a, np.abs(tr), levels=[1.0, 2.0, 4.0, 8.0], colors="k", linewidths=0.7)
        ax.clabel(cs, fmt=lambda v: f"|tr|={v:g}", fontsize=7)
        ax.set_xlabel("s (cone points at -s and +s)")
        ax.set_ylabel("cone angle alpha / 2 pi (both cones)")
        ax.set_title(title or "Virasoro class of the boundary potential, two cone points")
        from matplotlib.patches import Patch

        ax.legend(handles=[Patch(color=cmap(0), label="elliptic"), Patch(color=cmap(2), label="hyperbolic"),
                           Patch(color=cmap(1), label="parabolic")], loc="upper right", fontsize=8)
        fig.tight_layout()
        fig.savefig(path, dpi=120)
        plt.close(fig)
        return str(path)


def two_cone_chart(angles, separations, *, c: float = 1.0, M: int = 256, jobs: int = 2) -> Chart:
    """Class, trace, rotation number, constant representative for each (alpha, s) (rows in parallel)."""
    angles = tuple(float(a) for a in angles)
    seps = tuple(float(s) for s in separations)
    if not angles or not seps:
        raise UsageError("two_cone_chart needs at least one angle and one separation")
    if any(not 0 < a < 2 * math.pi for a in angles) or any(not 0 < s < 1 for s in seps):
        raise UsageError("angles must lie in (0, 2 pi) and separations s in (0, 1)")
    t0 = time.perf_counter()
    tasks = [(a, seps, c, M) for a in angles]
    if jobs > 1 and len(tasks) > 1:
        import multiprocessing

        with ProcessPoolExecutor(jobs, mp_context=multiprocessing.get_context("spawn")) as ex:
            rows = list(ex.map(_row, tasks))
    else:
        rows = [_row(t) for t in tasks]
    return Chart(angles, seps, tuple(tuple(r) for r in rows), c, time.perf_counter() - t0, jobs)
