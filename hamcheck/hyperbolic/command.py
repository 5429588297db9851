"""Loading a disk described in a Python file, and the text of ``hamcheck disk``.

The file defines ``cones = [(p, alpha), ...]`` (then the metric is solved by
:func:`cone_metric`, or is :func:`cone_disk` for one cone), or ``u(x, y)`` with
optional ``cones`` (a proposed metric, checked as given); optionally ``c``.
"""

from __future__ import annotations

import os
import runpy

import numpy as np

from ..errors import UsageError
from ._common import as_cones
from .metric import Metric


def load_disk(path):
    """``(metric, c or None)`` from a Python file (see the module docstring)."""
    path = os.fspath(path)
    if not os.path.exists(path):
        raise UsageError(f"no such file: {path}; expected a .py file defining cones = [(p, alpha), ...] or u(x, y)")
    if not path.endswith(".py"):
        raise UsageError(f"{path}: expected a .py file defining cones = [(p, alpha), ...] or u(x, y)")
    try:
        ns = runpy.run_path(path)
    except Exception as exc:
        raise UsageError(f"running {path} raised {type(exc).__name__}: {exc}") from None
    c = ns.get("c")
    if c is not None:
        try:
            c = float(c)
        except (TypeError, ValueError):
            raise UsageError(f"{path}: c = {c!r} is not a number") from None
    cones = as_cones(ns.get("cones", ()), what=f"{path}: cones")
    name = os.path.splitext(os.path.basename(path))[0]
    if "u" in ns:
        if not callable(ns["u"]):
            raise UsageError(f"{path}: u must be a function u(x, y) written with jax.numpy")
        m = Metric(ns["u"], cones, None, name, source=os.path.abspath(path))
    elif not cones:
        raise UsageError(f"{path} defines neither u(x, y) nor cones = [(p, alpha), ...]")
    elif len(cones) == 1:
        from .metric import cone_disk

        m = cone_disk(cones[0].alpha, cones[0].p)
    else:
        from .cone_metrics import cone_metric

        m = cone_metric(cones)
    object.__setattr__(m, "source", os.path.abspath(path))
    return m, c


def run(path, c=None, points: int = 32, seed: int = 0, only=None):
    """``(report, classification or None)`` for the file; the orbit only when the metric passed."""
    from .boundary import classify_metric
    from .validation import check_metric

    metric, c_file = load_disk(path)
    c = c if c is not None else (c_file if c_file is not None else 1.0)
    report = check_metric(metric, points=points, seed=seed, only=only)
    orbit = classify_metric(metric, c=c) if report.passed else None
    return report, orbit


def format_orbit(d: dict) -> str:
    T0 = d["representative"]
    M = np.asarray(d["matrix"])
    return "\n".join([
        f"orbit of the boundary potential (c = {d['c']:g}; T from {d['how']}, error ~{d['boundary_error']:.0e})",
        f"  class               {d['class']}",
        f"  trace               {d['trace']:.15g}",
        f"  monodromy           [[{M[0, 0]:.10g}, {M[0, 1]:.10g}], [{M[1, 0]:.10g}, {M[1, 1]:.10g}]]",
        f"  rotation number     {d['rotation_number']:.15g}",
        f"  stabilizer dim      {d['stabilizer_dim']} (solutions), {d['stabilizer_dim_fourier']} (Fourier kernel)",
        f"  constant on orbit   {'none' if T0 is None else f'{T0:.15g}'}  ({d['representative_note']})",
    ])
