"""Results as frozen dataclasses, and their renderings (text, JSON, Markdown).

The JSON layout is versioned by :data:`SCHEMA_VERSION`; ``tests/test_report.py``
pins it. Add fields freely; renaming or removing one bumps the version.

Example
-------
>>> from hamcheck.report import CheckResult
>>> CheckResult("closed", "pass", 3e-16, 1e-12, None, "d omega = 0 at 32 points", 32)
CheckResult(closed: pass, residual=3e-16 <= 1e-12, points=32)
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping

import numpy as np

__all__ = ["CheckResult", "Finding", "Report", "SCHEMA_VERSION", "STATUSES"]

SCHEMA_VERSION = 1
STATUSES = ("pass", "fail", "error", "skip")


def _fmt(v) -> str:
    if v is None:
        return "-"
    if isinstance(v, float) and not math.isfinite(v):
        return str(v)
    return f"{v:.1e}"


def _plain(value):
    """Convert numpy values (recursively) to JSON-friendly Python objects."""
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, np.ndarray):
        return _plain(value.tolist())
    if isinstance(value, (np.floating, float)):
        f = float(value)
        return f if math.isfinite(f) else str(f)
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, (np.bool_,)):
        return bool(value)
    if isinstance(value, complex):
        return [value.real, value.imag]
    return value


@dataclass(frozen=True)
class CheckResult:
    """Outcome of one check over all sampled points.

    ``residual`` is the worst relative residual (for ``nondegenerate``: the
    smallest relative singular value, which must stay *above* ``tolerance``);
    ``worst_point`` the chart coordinates where it occurred.
    """

    name: str
    status: str
    residual: float | None
    tolerance: float | None
    worst_point: tuple | None
    message: str
    points: int = 0
    statement: str = ""
    replay: str = ""

    def __repr__(self) -> str:
        if self.residual is None:
            return f"CheckResult({self.name}: {self.status}, points={self.points})"
        rel = ">=" if self.name == "nondegenerate" else "<="
        return (
            f"CheckResult({self.name}: {self.status}, residual={_fmt(self.residual)} {rel} "
            f"{_fmt(self.tolerance)}, points={self.points})"
        )

    def to_dict(self) -> dict:
        return _plain(
            {
                "name": self.name,
                "status": self.status,
                "residual": self.residual,
                "tolerance": self.tolerance,
                "worst_point": self.worst_point,
                "points": self.points,
                "message": self.message,
                "statement": self.statement,
                "replay": self.replay,
            }
        )


@dataclass(frozen=True)
class Finding:
    """A diagnosis: what is wrong (``kind``), how to fix it (``message``), the numbers (``data``)."""

    kind: str
    message: str
    data: Mapping = field(default_factory=dict)
    check: str = ""
    replay: str = ""

    def __repr__(self) -> str:
        return f"Finding({self.kind}: {self.message[:70]}{'...' if len(self.message) > 70 else ''})"

    def to_dict(self) -> dict:
        return _plain(
            {"kind": self.kind, "check": self.check, "message": self.message, "data": dict(self.data), "replay": self.replay}
        )


@dataclass(frozen=True)
class Report:
    """Everything one :func:`hamcheck.check` run found about one model.

    ``findings`` are failures of the mathematics with their fixes;
    ``diagnoses`` say how far the run itself can be trusted (too few finite
    points, ill-conditioning, finite differences) and never fail a model.
    """

    model: str
    source: str | None
    seed: int
    points: int
    derivatives: str
    results: Mapping[str, CheckResult]
    findings: tuple[Finding, ...] = ()
    diagnoses: tuple[Finding, ...] = ()
    seconds: float = 0.0

    def __post_init__(self):
        object.__setattr__(self, "results", MappingProxyType(dict(self.results)))
        object.__setattr__(self, "findings", tuple(self.findings))
        object.__setattr__(self, "diagnoses", tuple(self.diagnoses))

    @property
    def passed(self) -> bool:
        """True when no check failed or errored (skipped checks say why in their message)."""
        return all(r.status in ("pass", "skip") for r in self.results.values())

    @property
    def failed_checks(self) -> tuple[str, ...]:
        return tuple(n for n, r in self.results.items() if r.status in ("fail", "error"))

    def __repr__(self) -> str:
        counts = {s: sum(r.status == s for r in self.results.values()) for s in STATUSES}
        summary = ", ".join(f"{v} {k}" for k, v in counts.items() if v)
        kinds = sorted({f.kind for f in self.findings})
        return f"Report({self.model!r}: {'PASSED' if self.passed else 'FAILED'}; {summary}; findings={kinds})"

    # ---------------------------------------------------------------- text
    def __str__(self) -> str:
        lines = [
            f"model {self.model}" + (f"  ({self.source})" if self.source else ""),
            f"  {self.points} points, seed {self.seed}, derivatives by {self.derivatives}",
            f"  {'check':<20}{'status':<8}{'residual':>10}  {'tolerance':>10}  note",
        ]
        for r in self.results.values():
            rel = ">=" if r.name == "nondegenerate" and r.residual is not None else "<="
            tol = f"{rel} {_fmt(r.tolerance)}" if r.tolerance is not None else "-"
            note = r.message.splitlines()[0] if r.message else ""
            lines.append(f"  {r.name:<20}{r.status:<8}{_fmt(r.residual):>10}  {tol:>10}  {note}")
        for f in self.findings:
            lines.append(f"  [{f.kind}] {f.message}")
            if f.replay:
                lines.append(f"      replay: {f.replay}")
        for d in self.diagnoses:
            lines.append(f"  (trust: {d.kind}) {d.message}")
        lines.append(f"  => {'PASSED' if self.passed else 'FAILED: ' + ', '.join(self.failed_checks)}")
        return "\n".join(lines)

    # ------------------------------------------------------------ machine
    def to_dict(self) -> dict:
        return {
            "schema": SCHEMA_VERSION,
            "model": self.model,
            "source": self.source,
            "seed": self.seed,
            "points": self.points,
            "derivatives": self.derivatives,
            "passed": self.passed,
            "seconds": round(self.seconds, 3),
            "results": {n: r.to_dict() for n, r in self.results.items()},
            "findings": [f.to_dict() for f in self.findings],
            "diagnoses": [d.to_dict() for d in self.diagnoses],
        }

    def to_json(self, **kwargs) -> str:
        kwargs.setdefault("indent", 2)
        return json.dumps(self.to_dict(), **kwargs)

    def to_markdown(self) -> str:
        out = [f"### {self.model} — {'passed' if self.passed else 'FAILED'}", ""]
        out.append(f"{self.points} points, seed {self.seed}, derivatives by {self.derivatives}.")
        out += ["", "| check | status | residual | tolerance | note |", "|---|---|---|---|---|"]
        for r in self.results.values():
            note = (r.message.splitlines()[0] if r.message else "").replace("|", "\\|")
            out.append(f"| {r.name} | {r.status} | {_fmt(r.residual)} | {_fmt(r.tolerance)} | {note} |")
        if self.findings:
            out += ["", "Findings:", ""]
            for f in self.findings:
                out.append(f"- **{f.kind}**: {f.message}" + (f" Replay: `{f.replay}`" if f.replay else ""))
        if self.diagnoses:
            out += ["", "Trust:", ""]
            out += [f"- {d.kind}: {d.message}" for d in self.diagnoses]
        return "\n".join(out) + "\n"
