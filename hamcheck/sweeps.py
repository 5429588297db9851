"""Sweeps of model families: check ``build(**params)`` over a grid of parameters, in one table.

``sweep(build, grid)`` checks every model of the family (here, or on a Dask
client's workers) and returns a frozen :class:`SweepTable`: the parameters,
pass/fail and the worst residual of every check, the finding kinds, and a
replay call for every failure; CSV/JSON export and ``.plot(path, x=..., y=...)``
(pass/fail and the worst residual over one or two parameters).

Example
-------
>>> import jax.numpy as jnp, numpy as np, hamcheck
>>> from hamcheck import sweep
>>> u1 = hamcheck.LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])])
>>> def plane(s):   # moment map scaled by s: only s = 1 is right
...     return hamcheck.Model("plane", 2, form=lambda x: jnp.array([[0.0, 1.0], [-1.0, 0.0]]),
...                           algebra=u1, moment=lambda x: -s * (x @ x) / 2 * jnp.ones(1),
...                           action=lambda g, x: g @ x)
>>> table = sweep(plane, {"s": [1.0, 2.0]}, points=4, only=["moment_map"])   # doctest: +SKIP
>>> [row.passed for row in table]                                            # doctest: +SKIP
[True, False]
"""

from __future__ import annotations

import csv
import io
import itertools
import json
import math
import time
from dataclasses import dataclass
from types import MappingProxyType
from typing import Mapping

import numpy as np

from .errors import UsageError

__all__ = ["SweepRow", "SweepTable", "sweep"]

_FLOOR = 1e-20  # residual/tolerance of an exactly satisfied identity, so margins stay finite on plots


@dataclass(frozen=True)
class SweepRow:
    """One model of the family: its parameters and, per check, status, worst residual and tolerance.

    ``passed`` is None when ``build`` failed (``message`` says how).
    """

    params: Mapping
    passed: bool | None
    status: Mapping
    residual: Mapping
    tolerance: Mapping
    findings: tuple = ()
    message: str = ""
    replay: str = ""
    seconds: float = 0.0

    def __post_init__(self):
        for name in ("params", "status", "residual", "tolerance"):
            object.__setattr__(self, name, MappingProxyType(dict(getattr(self, name))))
        object.__setattr__(self, "findings", tuple(self.findings))

    def __repr__(self) -> str:
        p = ", ".join(f"{k}={v!r}" for k, v in self.params.items())
        verdict = "built nothing" if self.passed is None else ("pass" if self.passed else "FAIL " + ",".join(self.failing))
        return f"SweepRow({p}: {verdict})"

    @property
    def failing(self) -> tuple:
        return tuple(c for c, s in self.status.items() if s in ("fail", "error"))

    def margin(self, check: str | None = None) -> float:
        """log10 of residual / tolerance (tolerance / value for ``nondegenerate``, which must stay
        above it) for ``check``, or the worst over all checks: > 0 fails, < 0 passes with room.
        An exact zero residual counts as -20 (far below any float64 round-off floor)."""
        names = [check] if check else list(self.residual)
        worst = -math.inf
        for c in names:
            r, t = self.residual.get(c), self.tolerance.get(c)
            if r is None or t is None or not t > 0:
                continue
            ratio = (t / r if r > 0 else math.inf) if c == "nondegenerate" else r / t
            worst = max(worst, math.log10(max(ratio, _FLOOR)))
        return worst if worst > -math.inf else math.nan

    def to_dict(self) -> dict:
        return {
            "params": _plain(dict(self.params)), "passed": self.passed, "status": dict(self.status),
            "residual": {k: _plain(v) for k, v in self.residual.items()},
            "tolerance": dict(self.tolerance), "findings": list(self.findings),
            "message": self.message, "replay": self.replay, "seconds": round(self.seconds, 3),
        }


def _plain(v):
    if isinstance(v, dict):
        return {k: _plain(x) for k, x in v.items()}
    if isinstance(v, (np.generic,)):
        v = v.item()
    if isinstance(v, float) and not math.isfinite(v):
        return str(v)
    return v


@dataclass(frozen=True, repr=False)
class SweepTable:
    """Rows of a sweep in grid order; ``names`` the parameters, ``checks`` the checks that ran.

    ``programs`` says how the members' compiled check programs were shared (one
    line per distinct outcome): float parameters are traced so that members of
    one shape share a program, unless ``build`` could not take traced values
    (the line then gives the reason, and each member compiled its own).
    """

    names: tuple
    checks: tuple
    rows: tuple
    points: int
    seed: int
    seconds: float = 0.0
    programs: tuple = ()

    def __repr__(self) -> str:
        n_pass = sum(r.passed is True for r in self.rows)
        n_fail = sum(r.passed is False for r in self.rows)
        n_none = sum(r.passed is None for r in self.rows)
        extra = f", {n_none} not built" if n_none else ""
        return f"SweepTable({len(self.rows)} models over {', '.join(self.names)}: {n_pass} pass, {n_fail} fail{extra})"

    def __len__(self) -> int:
        return len(self.rows)

    def __iter__(self):
        return iter(self.rows)

    def __getitem__(self, i) -> SweepRow:
        return self.rows[i]

    @property
    def passed(self) -> bool:
        return all(r.passed for r in self.rows)

    def column(self, name: str) -> list:
        """A parameter's values, or ``"<check>:status"`` / ``"<check>:residual"`` down the rows."""
        if name in self.names:
            return [r.params.get(name) for r in self.rows]
        check, _, field = name.partition(":")
        if check in self.checks and field in ("status", "residual"):
            return [getattr(r, field).get(check) for r in self.rows]
        raise UsageError(f"no column {name!r}; expected a parameter {list(self.names)} or CHECK:status / CHECK:residual")

    def to_dict(self) -> dict:
        return {
            "kind": "sweep", "parameters": list(self.names), "checks": list(self.checks), "points": self.points,
            "seed": self.seed, "seconds": round(self.seconds, 3), "programs": list(self.programs),
            "rows": [r.to_dict() for r in self.rows],
        }

    def to_json(self, **kwargs) -> str:
        return json.dumps(self.to_dict(), **{"indent": 2, **kwargs})

    def to_csv(self) -> str:
        """One line per model: parameters, passed, status and residual per check, findings, message, replay."""
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        head = list(self.names) + ["passed"]
        for c in self.checks:
            head += [f"{c}:status", f"{c}:residual"]
        w.writerow(head + ["findings", "message", "replay"])
        for r in self.rows:
            line = [r.params.get(n, "") for n in self.names] + ["" if r.passed is None else r.passed]
            for c in self.checks:
                res = r.residual.get(c)
                line += [r.status.get(c, ""), "" if res is None else repr(float(res))]
            w.writerow(line + [";".join(r.findings), r.message, r.replay])
        return buf.getvalue()

    def plot(self, path, x: str, y: str | None = None, check: str | None = None, title: str | None = None) -> str:
        """PNG of pass/fail and the worst residual over parameter ``x`` (and ``y``).

        One parameter: residual / tolerance (log10, see :meth:`SweepRow.margin`)
        against ``x``, failures marked. Two: a map of that margin over the
        ``(x, y)`` grid, failing cells crossed. ``check`` picks one check (default
        the worst of all). Needs matplotlib (``pip install 'hamcheck[plots]'``).
        """
        try:
            import matplotlib

            matplotlib.use("Agg")
            import matplotlib.pyplot as plt
        except ImportError:
            raise UsageError("SweepTable.plot needs matplotlib, an optional extra: pip install 'hamcheck[plots]'") from None
        for name in (x, y):
            if name is not None and name not in self.names:
                raise UsageError(f"no parameter {name!r} in this sweep; expected one of {list(self.names)}")
        if check is not None and check not in self.checks:
            raise UsageError(f"check {check!r} did not run in this sweep; expected one of {list(self.checks)}")
        try:
            xs = np.array([float(r.params[x]) for r in self.rows])
            ys = None if y is None else np.array([float(r.params[y]) for r in self.rows])
        except (TypeError, ValueError, KeyError):
            raise UsageError(f"plot needs numeric values of {x!r}{'' if y is None else f' and {y!r}'} in every row") from None
        m = np.array([r.margin(check) for r in self.rows])
        bad = np.array([r.passed is not True if check is None else r.status.get(check) in ("fail", "error") for r in self.rows])
        label = f"log10 residual/tolerance ({check or 'worst check'})"
        fig, ax = plt.subplots(figsize=(7.5, 5))
        if y is None:
            order = np.argsort(xs, kind="stable")
            ax.plot(xs[order], m[order], "o-", color="#3182bd", label=label)
            ax.plot(xs[bad], m[bad], "x", color="#de2d26", ms=10, mew=2, label="fails")
            ax.axhline(0.0, color="k", lw=0.8, ls="--", label="tolerance")
            ax.set_xlabel(x)
            ax.set_ylabel(label)
            ax.legend(fontsize=8)
        else:
            ux, uy = np.unique(xs), np.unique(ys)
            grid = np.full((len(uy), len(ux)), np.nan)
            fails = np.zeros_like(grid, dtype=bool)
            for xi, yi, mi, bi in zip(np.searchsorted(ux, xs), np.searchsorted(uy, ys), m, bad):
                grid[yi, xi] = mi if np.isnan(grid[yi, xi]) else max(grid[yi, xi], mi)
                fails[yi, xi] |= bi
            finite = grid[np.isfinite(grid)]
            lim = max(1.0, float(np.abs(finite).max())) if finite.size else 1.0
            im = ax.pcolormesh(ux, uy, grid, cmap="RdYlGn_r", vmin=-lim, vmax=lim, shading="nearest")
            fig.colorbar(im, ax=ax, label=label)
            fy, fx = np.nonzero(fails)
            ax.plot(ux[fx], uy[fy], "kx", ms=8, mew=1.5, label="fails", ls="none")
            if fails.any():
                ax.legend(fontsize=8, loc="upper right")
            ax.set_xlabel(x)
            ax.set_ylabel(y)
        ax.set_title(title or f"sweep of {len(self.rows)} models ({self.points} points, seed {self.seed})")
        fig.tight_layout()
        fig.savefig(path, dpi=120)
        plt.close(fig)
        return str(path)


def _combinations(grid) -> tuple[tuple, list[dict]]:
    if isinstance(grid, Mapping):
        names = tuple(grid)
        if not names:
            raise UsageError("grid is empty; expected {name: [values, ...], ...} or a list of parameter dicts")
        values = []
        for n in names:
            v = grid[n]
            if isinstance(v, (str, bytes)) or not hasattr(v, "__iter__"):
                raise UsageError(f"grid[{n!r}] must be a list of values; got {v!r}")
            values.append(list(v))
            if not values[-1]:
                raise UsageError(f"grid[{n!r}] is empty; expected at least one value")
        return names, [dict(zip(names, combo)) for combo in itertools.product(*values)]
    try:
        combos = [dict(p) for p in grid]
    except (TypeError, ValueError):
        raise UsageError("grid must map parameter names to lists of values, or be a list of parameter dicts") from None
    if not combos:
        raise UsageError("grid is empty; expected at least one parameter dict")
    names = tuple(dict.fromkeys(k for p in combos for k in p))
    return names, combos


def _check_member(build, params, kwargs, scope):
    """Build and check one member of the family (here or on a worker); plain data out."""
    from .checks._family import Family
    from .model import Model
    from .suite import check

    t0 = time.perf_counter()
    try:
        model = build(**params)
    except Exception as exc:
        return {"params": params, "error": f"build raised {type(exc).__name__}: {' '.join(str(exc).split())[:200]}"}
    if not isinstance(model, Model):
        return {"params": params, "error": f"build returned {type(model).__name__}; expected a hamcheck.Model"}
    family = Family(build, params, scope)
    report = check(model, **kwargs, _family=family)
    if not family.traced_names:
        programs = "one per member: no float parameter to trace"
    else:
        programs = family.refusal or f"shared by the members of one shape ({', '.join(family.traced_names)} traced)"
    return {"params": params, "report": report.to_dict(), "seconds": time.perf_counter() - t0, "programs": programs}


def _check_members(build, params_list, kwargs):
    from .checks._family import Scope

    scope = Scope()  # one task's members share programs
    return [_check_member(build, p, kwargs, scope) for p in params_list]


def _on_client(client, build, combos, kwargs) -> list:
    """The members in two tasks per worker, members of one shape together: each task unpickles
    ``build`` once, so its members share compiled programs as they do here."""
    from .checks._family import shape_key
    from .distributed import gather_in_order

    workers = max(1, len(client.scheduler_info().get("workers", {})))
    order = sorted(range(len(combos)), key=lambda i: shape_key(combos[i]))
    chunks = [list(c) for c in np.array_split(order, min(len(combos), 2 * workers)) if len(c)]
    futures = [client.submit(_check_members, build, [combos[i] for i in ch], kwargs, pure=False) for ch in chunks]
    results = [None] * len(combos)
    for ch, part in zip(chunks, gather_in_order(futures, what="a chunk of the sweep's models")):
        for i, r in zip(ch, part):
            results[i] = r
    return results


def _row(data, build_name, kwargs) -> SweepRow:
    from .report import Report

    params = data["params"]
    call = f"{build_name}({', '.join(f'{k}={v!r}' for k, v in params.items())})"
    if "error" in data:
        return SweepRow(params, None, {}, {}, {}, (), data["error"], call)
    report = Report.from_dict(data["report"])
    res = report.results
    failing = [c for c, r in res.items() if r.status in ("fail", "error")]
    replay = ""
    if failing or not report.passed:
        only = f", only=[{failing[0]!r}]" if failing else ""
        replay = f"hamcheck.check({call}, points={kwargs['points']}, seed={kwargs['seed']}{only})"
    return SweepRow(
        params, report.passed, {c: r.status for c, r in res.items()}, {c: r.residual for c, r in res.items()},
        {c: r.tolerance for c, r in res.items()}, tuple(sorted({f.kind for f in report.findings})), "", replay,
        data.get("seconds", 0.0),
    )


def sweep(build, grid, *, points: int = 32, seed: int = 0, only=None, tolerances=None, settings=None, client=None) -> SweepTable:
    """Check ``build(**params)`` for every parameter set of ``grid``.

    ``grid`` maps names to value lists (their Cartesian product is swept, the
    last name varying fastest) or is a list of parameter dicts. ``points``,
    ``seed``, ``only``, ``tolerances``, ``settings`` go to :func:`hamcheck.check`,
    so each row equals an individual ``check`` call. With a Dask ``client`` the
    models are built and checked on the workers, two tasks per worker with the
    members of one shape together (``build`` is shipped with cloudpickle, so it
    must not hold unpicklable state). Members of one shape share compiled
    programs (``SweepTable.programs`` says whether they could). A ``build`` that raises gives a row
    with ``passed = None`` and the message; the sweep goes on.
    """
    if not callable(build):
        raise UsageError(f"build must be a function build(**params) -> hamcheck.Model; got {type(build).__name__}")
    names, combos = _combinations(grid)
    kwargs = {"points": points, "seed": seed, "only": only, "tolerances": tolerances, "settings": settings}
    t0 = time.perf_counter()
    if client is None:
        results = _check_members(build, combos, kwargs)
    else:
        results = _on_client(client, build, combos, kwargs)
    build_name = getattr(build, "__name__", "build")
    rows = tuple(_row(r, build_name, kwargs) for r in results)
    checks = tuple(dict.fromkeys(c for r in rows for c in r.status))
    programs = tuple(dict.fromkeys(r["programs"] for r in results if "programs" in r))
    return SweepTable(names, checks, rows, points, seed, time.perf_counter() - t0, programs)
