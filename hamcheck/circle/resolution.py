"""Resolution studies: residual against resolution, a fitted decay, a verdict, a table and a PNG.

Two layers:

* :func:`resolution_study` judges one series ``fn(n) -> residual``.
* :func:`check_resolution_study` is the protocol both orbit charts use: for
  each quadrature grid M it builds the chart with ``build(M)`` and runs a real
  :func:`hamcheck.check` on it with the named checks (same points, same seed),
  then judges every check's column with :func:`resolution_study`. The form is
  called verified only when the moment checks ran and every check is within
  its :class:`hamcheck.Tolerances` on the finest grid: closedness alone does
  not pin a form (a wrong cocycle coefficient or a consistent sign flip is
  closed too). Each grid is a new model, so each costs one compilation.

>>> s = resolution_study(lambda n: 10.0 ** -n, [2, 4, 6, 8])
>>> s.verdict, round(s.fit["geometric"]["rate"], 6)
('converges', 0.1)
"""

from __future__ import annotations

import math
import os
import warnings
from dataclasses import dataclass

import numpy as np

from ..errors import UsageError
from .tolerances import TOLERANCES

__all__ = ["fit_decay", "ResolutionStudy", "resolution_study", "ChartResolution", "check_resolution_study", "summarize_resolution"]


def fit_decay(resolutions, residuals) -> dict:
    """Least-squares fits of ``log r`` against ``n`` (geometric) and ``log n`` (algebraic).

    Points at round-off (below ``TOLERANCES.round_off_floor``) are left out. Returns
    ``{"geometric": {"rate", "misfit"}, "algebraic": {"power", "misfit"}, "best"}``
    with ``r ~ A rate^n`` and ``r ~ A n^-power``; ``best`` is the smaller misfit.
    """
    n = np.asarray(resolutions, dtype=float)
    r = np.asarray(residuals, dtype=float)
    keep = np.isfinite(r) & (r > TOLERANCES.round_off_floor)
    out = {"geometric": None, "algebraic": None, "best": None, "points": int(keep.sum())}
    if keep.sum() < 2:
        return out
    x, y = n[keep], np.log(r[keep])
    for kind, xs in (("geometric", x), ("algebraic", np.log(x))):
        A = np.stack([np.ones_like(xs), xs], axis=1)
        coef, *_ = np.linalg.lstsq(A, y, rcond=None)
        misfit = float(np.sqrt(np.mean((A @ coef - y) ** 2)))
        if kind == "geometric":
            out[kind] = {"rate": float(np.exp(coef[1])), "misfit": misfit}
        else:
            out[kind] = {"power": float(-coef[1]), "misfit": misfit}
    out["best"] = "geometric" if out["geometric"]["misfit"] <= out["algebraic"]["misfit"] else "algebraic"
    return out


def _semilog(path, xlabel: str, series: dict, title: str) -> str:
    """One semilog PNG of residual columns against resolution (needs matplotlib)."""
    try:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError:
        raise UsageError("plotting needs matplotlib: pip install 'hamcheck[plots]'") from None
    fig, ax = plt.subplots(figsize=(5.5, 3.8))
    for name, (xs, rs) in series.items():
        ax.semilogy(xs, np.maximum(np.asarray(rs, dtype=float), 1e-17), "o-", label=name)
    ax.axhline(TOLERANCES.round_off_floor, color="gray", ls=":", label="round-off floor")
    ax.set_xlabel(xlabel)
    ax.set_ylabel("relative residual")
    ax.set_title(title, fontsize=10)
    ax.legend(fontsize=8)
    fig.tight_layout()
    fig.savefig(path, dpi=100)
    plt.close(fig)
    return os.fspath(path)


@dataclass(frozen=True)
class ResolutionStudy:
    """Residual against resolution with a fitted decay and a verdict.

    ``verdict`` is one of ``"round-off"`` (already at round-off),
    ``"converges"`` (falls to round-off or by more than ``1/stall_factor``),
    ``"stalls"`` (does not fall: a failure of the construction, not of the
    truncation).
    """

    label: str
    resolutions: tuple
    residuals: tuple
    fit: dict
    verdict: str
    message: str

    def table(self) -> str:
        lines = [f"{self.label:>12}  {'residual':>10}  {'ratio':>8}"]
        prev = None
        for n, r in zip(self.resolutions, self.residuals):
            ratio = "" if prev is None or prev == 0 else f"{r / prev:8.2e}"
            lines.append(f"{n:>12}  {r:10.2e}  {ratio:>8}")
            prev = r
        g, a = self.fit.get("geometric"), self.fit.get("algebraic")
        if g:
            lines.append(f"geometric fit: r ~ {g['rate']:.3g}^n (log misfit {g['misfit']:.2f})")
        if a:
            lines.append(f"algebraic fit: r ~ n^-{a['power']:.3g} (log misfit {a['misfit']:.2f})")
        lines.append(f"verdict: {self.verdict}: {self.message}")
        return "\n".join(lines)

    __str__ = table

    def to_dict(self) -> dict:
        return {
            "label": self.label,
            "resolutions": list(self.resolutions),
            "residuals": [float(r) for r in self.residuals],
            "fit": self.fit,
            "verdict": self.verdict,
            "message": self.message,
        }

    def plot(self, path, title: str | None = None) -> str:
        """Write a semilog PNG of residual against resolution (needs matplotlib)."""
        return _semilog(path, self.label, {"residual": (self.resolutions, self.residuals)}, title or self.verdict)


def resolution_study(fn, resolutions, label: str = "resolution") -> ResolutionStudy:
    """Run ``fn(n) -> residual`` for each resolution and judge the decay (see the module example)."""
    res = [int(n) for n in resolutions]
    if len(res) < 2:
        raise UsageError(f"a resolution study needs at least two resolutions; got {res}")
    if sorted(res) != res or len(set(res)) != len(res):
        raise UsageError(f"resolutions must be strictly increasing; got {res}")
    vals = tuple(float(fn(n)) for n in res)
    fit = fit_decay(res, vals)
    first, last = vals[0], vals[-1]
    floor = TOLERANCES.round_off_floor
    if not all(math.isfinite(v) for v in vals):
        verdict, msg = "stalls", "non-finite residuals: the construction breaks, not the truncation"
    elif max(vals) <= floor:
        verdict, msg = "round-off", "at round-off at every resolution"
    elif last <= floor or last <= TOLERANCES.stall_factor * first:
        best = fit.get("best")
        how = ""
        if best == "geometric":
            how = f" geometrically (factor {fit['geometric']['rate']:.3g} per unit of {label})"
        elif best == "algebraic":
            how = f" algebraically (power {fit['algebraic']['power']:.3g})"
        verdict, msg = "converges", f"residual falls from {first:.1e} to {last:.1e}{how}"
    else:
        verdict, msg = (
            "stalls",
            f"residual does not fall with {label} ({first:.1e} -> {last:.1e}): a failure of the "
            "construction (a wrong formula), not of the truncation",
        )
    return ResolutionStudy(label, tuple(res), vals, fit, verdict, msg)


@dataclass(frozen=True)
class ChartResolution:
    """Residuals of an orbit chart's checks against the quadrature grid, with a verdict.

    ``studies`` maps a check name to a :class:`ResolutionStudy`. ``verified``
    is True only when the moment checks ran and every check is below its
    tolerance on the finest grid (see the module docstring).
    """

    grids: tuple
    studies: dict
    verified: bool
    verdict: str

    def table(self) -> str:
        names = list(self.studies)
        lines = [f"{'grid M':>8}  " + "  ".join(f"{n:>13}" for n in names)]
        for k, M in enumerate(self.grids):
            lines.append(f"{M:>8}  " + "  ".join(f"{self.studies[n].residuals[k]:13.2e}" for n in names))
        for n, s in self.studies.items():
            lines.append(f"{n}: {s.verdict}: {s.message}")
        lines.append(f"verdict: {self.verdict}")
        return "\n".join(lines)

    __str__ = table

    def to_dict(self) -> dict:
        return {"grids": list(self.grids), "verified": self.verified, "verdict": self.verdict,
                "studies": {n: s.to_dict() for n, s in self.studies.items()}}

    def plot(self, path, title: str | None = None) -> str:
        """One PNG with every check's residual against M (semilog; needs matplotlib)."""
        series = {n: (self.grids, s.residuals) for n, s in self.studies.items()}
        return _semilog(path, "quadrature grid M", series, title or ("verified" if self.verified else "not verified"))


def summarize_resolution(grids, residuals: dict) -> ChartResolution:
    """Fitted decays and the verdict for a table ``{check name: residual per grid}``."""
    from ..numerics import TOLERANCES as CHECK_TOLERANCES

    grids = tuple(int(g) for g in grids)
    checks = tuple(residuals)
    studies = {n: resolution_study(lambda M, n=n: residuals[n][grids.index(M)], grids, label="grid M") for n in checks}
    ok = {n: residuals[n][-1] <= CHECK_TOLERANCES.for_check(n) for n in checks}
    if "moment_map" not in checks:
        state = "holds" if all(ok.values()) else "fails"
        return ChartResolution(grids, studies, False, (
            f"{', '.join(checks)} {state} on the finest grid M={grids[-1]}, but the form is NOT verified: the "
            "moment checks were not run, and closedness alone does not pin the form (a wrong cocycle coefficient "
            "or a consistent sign flip is closed too)"
        ))
    if all(ok.values()):
        return ChartResolution(grids, studies, True, f"verified at M={grids[-1]}: {', '.join(checks)} hold to round-off")
    failing = [n for n in checks if not ok[n]]
    stalls = [n for n in failing if studies[n].verdict == "stalls"]
    why = (
        f"{', '.join(stalls)} do(es) not fall with M: a wrong formula, not the quadrature"
        if stalls
        else "residuals still falling: refine the grid"
    )
    verdict = f"not verified: {', '.join(failing)} above tolerance at M={grids[-1]} ({why})"
    if ok.get("closed") and not ok.get("moment_map", True):
        verdict += "; closed but the moment equation fails, so the form is closed and wrong"
    return ChartResolution(grids, studies, False, verdict)


#: checks whose residual is an upper bound (``nondegenerate`` must stay above its tolerance)
STUDY_CHECKS = ("antisymmetric", "closed", "moment_map", "invariant", "equivariance")


def check_resolution_study(build, grids, *, checks=("antisymmetric", "closed", "moment_map"), points: int = 4,
                           seed: int = 0) -> ChartResolution:
    """Run :func:`hamcheck.check` with ``only=checks`` on ``build(M)`` for each grid M and judge the columns.

    ``build(M)`` returns a :class:`hamcheck.Model` (warnings while building,
    e.g. about degenerate modes, are silenced: the study reports residuals).
    """
    from ..suite import check as run_check

    checks = tuple(checks)
    bad = [n for n in checks if n not in STUDY_CHECKS]
    if bad or not checks:
        raise UsageError(f"checks must be a non-empty subset of {STUDY_CHECKS}; got {list(checks)}")
    grids = tuple(int(g) for g in grids)
    if len(grids) < 2:
        raise UsageError(f"give at least two grids; got {list(grids)}")
    table = {n: [] for n in checks}
    for M in grids:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            model = build(M)
        report = run_check(model, points=points, seed=seed, only=list(checks))
        for n in checks:
            r = report.results[n].residual
            table[n].append(float("nan") if r is None else float(r))
    return summarize_resolution(grids, table)
