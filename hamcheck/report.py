"""Results as frozen dataclasses, and their renderings (text, JSON, Markdown, CSV).

* :class:`CheckResult`, :class:`Finding`, :class:`Report`: one model's check;
* :class:`Outcome`, :class:`RunReport`: one row per model or unloadable file
  of a ``hamcheck check`` run, and the run itself (summary table, exit code).

The JSON layout is versioned by :data:`SCHEMA_VERSION` and documented in
``docs/report-schema.md``; ``tests/test_report.py`` pins it. Add fields
freely; renaming or removing one, or changing its meaning, bumps the version
(:meth:`Report.from_dict` still reads every older version).

Example
-------
>>> from hamcheck.report import CheckResult
>>> CheckResult("closed", "pass", 3e-16, 1e-12, None, "d omega = 0 at 32 points", 32)
CheckResult(closed: pass, residual=3.0e-16 <= 1.0e-12, points=32)
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping

import numpy as np

from .errors import UsageError

__all__ = [
    "CSV_COLUMNS",
    "CheckResult",
    "Finding",
    "NOT_CHECKED",
    "OUTCOME_STATUSES",
    "Outcome",
    "Report",
    "RunReport",
    "SCHEMA_VERSION",
    "STATUSES",
]

#: 2: results carry ``compare`` and state their condition in the model's convention (1: the default one).
SCHEMA_VERSION = 2
READABLE_SCHEMAS = (1, 2)
STATUSES = ("pass", "fail", "error", "skip")
#: Names under which faults of the model's own functions are reported.
USER_FUNCTIONS = ("form", "moment", "vector_fields", "action", "sample")


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


_RELATIONS = {"below": "<=", "above": ">="}


def _field(data: Mapping, key: str, what: str):
    """``data[key]``, or a :class:`hamcheck.UsageError` naming the missing field."""
    try:
        return data[key]
    except (KeyError, TypeError):
        raise UsageError(f"{what} document lacks the field {key!r} (see docs/report-schema.md)") from None


@dataclass(frozen=True)
class CheckResult:
    """Outcome of one check over all sampled points.

    ``residual`` is the worst value over the points and ``compare`` says which
    way it is held against ``tolerance``: ``"below"`` (a relative defect, the
    worst is the largest) or ``"above"`` (a margin such as the smallest relative
    singular value, the worst is the smallest); ``worst_point`` the chart
    coordinates where it occurred; ``statement`` the condition tested, in the
    model's convention (what ``--explain`` prints).
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
    compare: str = "below"

    def __post_init__(self):
        if self.compare not in _RELATIONS:
            raise UsageError(f"CheckResult {self.name!r}: compare={self.compare!r}; expected one of {tuple(_RELATIONS)}")

    @property
    def relation(self) -> str:
        """``<=`` or ``>=``: how the residual must stand to the tolerance."""
        return _RELATIONS[self.compare]

    def __repr__(self) -> str:
        if self.residual is None:
            return f"CheckResult({self.name}: {self.status}, points={self.points})"
        return (
            f"CheckResult({self.name}: {self.status}, residual={_fmt(self.residual)} {self.relation} "
            f"{_fmt(self.tolerance)}, points={self.points})"
        )

    @classmethod
    def from_dict(cls, data: Mapping) -> "CheckResult":
        def num(v):
            return float(v) if v is not None else None  # "inf"/"nan" strings come back as floats

        wp = data.get("worst_point")
        return cls(
            _field(data, "name", "result"), _field(data, "status", "result"), num(data.get("residual")),
            num(data.get("tolerance")), None if wp is None else tuple(float(v) for v in wp), data.get("message", ""),
            int(data.get("points", 0)), data.get("statement", ""), data.get("replay", ""),
            data.get("compare", "below"),
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
                "compare": self.compare,
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

    @classmethod
    def from_dict(cls, data: Mapping) -> "Finding":
        return cls(
            _field(data, "kind", "finding"), data.get("message", ""), dict(data.get("data", {})), data.get("check", ""),
            data.get("replay", ""),
        )

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
    convention: tuple[int, int] | None = None

    def __post_init__(self):
        object.__setattr__(self, "results", MappingProxyType(dict(self.results)))
        object.__setattr__(self, "findings", tuple(self.findings))
        object.__setattr__(self, "diagnoses", tuple(self.diagnoses))
        if self.convention is not None:
            c = self.convention
            pair = (c.sign, c.flow) if hasattr(c, "sign") else tuple(c)
            object.__setattr__(self, "convention", (int(pair[0]), int(pair[1])))

    @property
    def passed(self) -> bool:
        """True when no check failed or errored and every user function was finite at every sampled point.

        Skipped checks say why in their message. A function returning NaN or
        raising at a point of its own declared domain (``sample``) fails the
        model even though the other points were checked.
        """
        if any(f.kind in ("non-finite", "raised") and f.check in USER_FUNCTIONS for f in self.findings):
            return False
        return all(r.status in ("pass", "skip") for r in self.results.values())

    @property
    def failed_checks(self) -> tuple[str, ...]:
        failed = [n for n, r in self.results.items() if r.status in ("fail", "error")]
        faults = {f.check for f in self.findings if f.kind in ("non-finite", "raised") and f.check in USER_FUNCTIONS}
        return tuple(failed + sorted(faults))

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
            rel = r.relation if r.residual is not None else "<="
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
            "convention": None if self.convention is None else {"sign": self.convention[0], "flow": self.convention[1]},
        }

    @classmethod
    def from_dict(cls, data: Mapping) -> "Report":
        """Inverse of :meth:`to_dict` (numbers come back as Python floats and lists).

        Reads every version in :data:`READABLE_SCHEMAS`; an older document is
        migrated (see ``docs/report-schema.md``) and writes back as the current
        version. Anything else raises :class:`hamcheck.UsageError`.
        """
        if not isinstance(data, Mapping):
            raise UsageError(f"a report document is a JSON object; got {type(data).__name__}")
        schema = data.get("schema")
        if schema not in READABLE_SCHEMAS:
            raise UsageError(
                f"report schema {schema!r} is not a supported version (this hamcheck reads {list(READABLE_SCHEMAS)})"
            )
        conv = data.get("convention")
        results = {n: CheckResult.from_dict(r) for n, r in _field(data, "results", "report").items()}
        if schema == 1:
            results = {n: _from_version_1(r, conv) for n, r in results.items()}
        return cls(
            model=_field(data, "model", "report"),
            source=data.get("source"),
            seed=_field(data, "seed", "report"),
            points=_field(data, "points", "report"),
            derivatives=data.get("derivatives", ""),
            results=results,
            findings=tuple(Finding.from_dict(f) for f in data.get("findings", ())),
            diagnoses=tuple(Finding.from_dict(f) for f in data.get("diagnoses", ())),
            seconds=float(data.get("seconds", 0.0)),
            convention=None if conv is None else (conv["sign"], conv["flow"]),
        )

    def explain(self, convention=None) -> str:
        """Plain statements of each failing check, in the model's convention, with the numbers.

        ``convention`` (a :class:`hamcheck.Convention` or ``(sign, flow)``)
        defaults to the report's own; empty string when everything passed.
        Meant to be handed back to whoever wrote the model.
        """
        from .explain import explain_report

        return explain_report(self, convention if convention is not None else self.convention)

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


def _from_version_1(result: CheckResult, convention) -> CheckResult:
    """Version 1 kept no comparison direction and stated the condition in the default convention.

    A check hamcheck knows gets both from its registry entry (its statement in
    the document's convention); a result of any other name keeps its statement
    and compares ``below``, as every such result of version 1 did.
    """
    import dataclasses

    from .checks import check_named
    from .errors import UnknownNameError

    try:
        c = check_named(result.name)
    except UnknownNameError:
        return result
    conv = (1, 1) if convention is None else (convention["sign"], convention["flow"])
    return dataclasses.replace(result, compare=c.compare, statement=c.state(conv))


# ------------------------------------------------------------------ runs
#: statuses of one row of a run's summary; the last five mean "could not be checked"
OUTCOME_STATUSES = ("pass", "fail", "load-error", "no-model", "timeout", "out-of-memory", "crashed")
NOT_CHECKED = OUTCOME_STATUSES[2:]


@dataclass(frozen=True)
class Outcome:
    """One row of a run's summary: a model that was checked, or a file that could not be.

    ``model`` is None for rows about a whole file (load errors, files that
    define no model, a time limit hit while importing). ``findings`` are the
    finding kinds; ``message`` one line saying what happened; ``replay`` the
    command that reproduces the row.
    """

    file: str
    model: str | None
    status: str
    failing_checks: tuple[str, ...] = ()
    findings: tuple[str, ...] = ()
    message: str = ""
    replay: str = ""
    seconds: float = 0.0

    def __post_init__(self):
        if self.status not in OUTCOME_STATUSES:
            raise UsageError(f"outcome status {self.status!r} is not one of {OUTCOME_STATUSES}")
        object.__setattr__(self, "failing_checks", tuple(self.failing_checks))
        object.__setattr__(self, "findings", tuple(self.findings))

    @classmethod
    def of_report(cls, file: str, report: Report, note: str = "") -> "Outcome":
        failing = report.failed_checks
        replays = [report.results[c].replay for c in failing if c in report.results]
        replays += [f.replay for f in report.findings if f.check in failing]  # faults of user functions
        replay = next((r for r in replays if r), "")
        return cls(
            file, report.model, "pass" if report.passed else "fail", failing,
            tuple(sorted({f.kind for f in report.findings})), note, replay, round(report.seconds, 3),
        )

    def to_dict(self) -> dict:
        return {
            "file": self.file,
            "model": self.model,
            "status": self.status,
            "failing_checks": list(self.failing_checks),
            "findings": list(self.findings),
            "message": self.message,
            "replay": self.replay,
            "seconds": self.seconds,
        }

    @classmethod
    def from_dict(cls, data: Mapping) -> "Outcome":
        return cls(
            _field(data, "file", "outcome"), data.get("model"), _field(data, "status", "outcome"), tuple(data.get("failing_checks", ())),
            tuple(data.get("findings", ())), data.get("message", ""), data.get("replay", ""),
            float(data.get("seconds", 0.0)),
        )


CSV_COLUMNS = ("file", "model", "status", "failing_checks", "findings", "message", "replay", "seconds")


@dataclass(frozen=True)
class RunReport:
    """The result of one ``hamcheck check`` run over files: summary rows and the full reports.

    ``exit_code`` is the command's exit status: 0 when every model passed,
    1 when some model failed or some file could not be checked (load error,
    no model, time or memory limit, crash: see :data:`NOT_CHECKED`; these are
    results of the batch), 2 only when there was nothing to check.
    """

    outcomes: tuple[Outcome, ...]
    reports: tuple[Report, ...] = ()
    options: Mapping = field(default_factory=dict)
    seconds: float = 0.0

    def __post_init__(self):
        object.__setattr__(self, "outcomes", tuple(self.outcomes))
        object.__setattr__(self, "reports", tuple(self.reports))
        object.__setattr__(self, "options", dict(self.options))

    @property
    def counts(self) -> dict:
        return {s: sum(o.status == s for o in self.outcomes) for s in OUTCOME_STATUSES}

    @property
    def exit_code(self) -> int:
        if not self.outcomes:
            return 2  # nothing was checked: hamcheck was pointed at nothing
        return 0 if all(o.status == "pass" for o in self.outcomes) else 1

    # ---------------------------------------------------------------- text
    def summary(self, width: int = 64) -> str:
        """The on-screen table: file, model, result, failing checks, findings, note."""
        head = ("file", "model", "result", "failing checks", "findings", "note")
        rows = [
            (
                o.file, o.model or "-", o.status if o.status == "pass" else o.status.upper(),
                ", ".join(o.failing_checks), ", ".join(o.findings), _clip(o.message, width),
            )
            for o in self.outcomes
        ]
        widths = [max([len(head[i])] + [len(r[i]) for r in rows]) for i in range(len(head))]

        def line(r):
            return "  ".join(str(c).ljust(w) for c, w in zip(r, widths)).rstrip()

        c = self.counts
        tail = [f"{c['pass']} of {len(self.outcomes)} passed"]
        if c["fail"]:
            tail.append(f"{c['fail']} failed")
        not_checked = sum(c[s] for s in NOT_CHECKED)
        if not_checked:
            tail.append(f"{not_checked} could not be checked")
        return "\n".join(["summary", line(head), line(tuple("-" * w for w in widths))] + [line(r) for r in rows] + ["; ".join(tail)])

    # ------------------------------------------------------------- machine
    def to_dict(self) -> dict:
        from . import __version__

        return {
            "schema": SCHEMA_VERSION,
            "kind": "run",
            "hamcheck": __version__,
            "options": _plain(self.options),
            "seconds": round(self.seconds, 3),
            "counts": self.counts,
            "exit_code": self.exit_code,
            "outcomes": [o.to_dict() for o in self.outcomes],
            "reports": [r.to_dict() for r in self.reports],
        }

    def to_json(self, **kwargs) -> str:
        kwargs.setdefault("indent", 2)
        return json.dumps(self.to_dict(), **kwargs)

    def to_csv(self) -> str:
        """One line per outcome, columns :data:`CSV_COLUMNS`; lists joined with ``;``."""
        import csv
        import io

        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(CSV_COLUMNS)
        for o in self.outcomes:
            d = o.to_dict()
            w.writerow([";".join(v) if isinstance(v, list) else ("" if v is None else v) for v in (d[k] for k in CSV_COLUMNS)])
        return buf.getvalue()

    def to_markdown(self, explain: bool = False) -> str:
        """Summary table, then every report; with ``explain`` the explanations of failing checks."""
        c = self.counts
        out = ["# hamcheck results", "", f"{c['pass']} of {len(self.outcomes)} passed.", ""]
        out += ["| file | model | result | failing checks | findings | note |", "|---|---|---|---|---|---|"]
        for o in self.outcomes:
            cells = (o.file, o.model or "-", o.status, ", ".join(o.failing_checks), ", ".join(o.findings), o.message)
            out.append("| " + " | ".join(_md_cell(x) for x in cells) + " |")
        for r in self.reports:
            out += ["", r.to_markdown().rstrip()]
            text = r.explain() if explain else ""
            if text:
                out += ["", "```text", text, "```"]
        return "\n".join(out) + "\n"


def _clip(text: str, width: int) -> str:
    text = " ".join(str(text).split())
    return text if len(text) <= width else text[: width - 3] + "..."


def _md_cell(text) -> str:
    return " ".join(str(text).split()).replace("|", "\\|")
