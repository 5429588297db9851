"""Plain-language explanations of failing checks, in the model's own convention.

Each failing (or erroring) check becomes a short paragraph: the condition that
was tested (the ``statement`` its :class:`~hamcheck.CheckResult` carries, in
the model's convention, so results made outside :func:`hamcheck.check`
explain themselves the same way); the worst value against its tolerance, in
the result's own direction, and the point where it occurred; the diagnoses that
name a likely cause; and the replay command. Suitable for handing back to
whoever wrote the model.

Example
-------
>>> from hamcheck.report import CheckResult, Report
>>> r = CheckResult("moment_map", "fail", 2.0, 1e-12, (0.5, -1.0), "fails", 8)
>>> text = explain_report(Report("plane", None, 0, 8, "autodiff", {"moment_map": r}), (-1, 1))
>>> print(text.splitlines()[2])
  Condition: the moment equation, with sign = -1: X_a^i omega_ij = -d_j mu_a for every basis
"""

from __future__ import annotations

import textwrap

__all__ = ["explain_report", "statement"]

_WIDTH = 96


def statement(check: str, convention=(1, 1), fallback: str = "") -> str:
    """The condition a registered check tests, with ``convention = (sign, flow)`` substituted.

    For a name hamcheck does not know: ``fallback``, or ``"the NAME check."``.
    """
    from .checks import check_named
    from .errors import UnknownNameError

    try:
        return check_named(check).state(convention)
    except UnknownNameError:
        return fallback or f"the {check} check."


def _condition(r, convention) -> str:
    """What the result carries; a result made without one (by hand) is stated from the registry."""
    return r.statement or statement(r.name, convention)


def _point(p) -> str:
    return "(" + ", ".join(f"{v:.4g}" for v in p) + ")" if p is not None else "(no point)"


def _measured(r) -> str:
    if r.status == "error":
        return f"It could not be evaluated: {r.message.removeprefix('could not run: ')}"
    if r.residual is None:
        return r.message
    where = f"at x = {_point(r.worst_point)}, over {r.points} points."
    if r.compare == "above":
        return f"Measured: smallest relative value {r.residual:.2e} (must be >= {r.tolerance:.1e}) {where}"
    ratio = f", {r.residual / r.tolerance:.1e} times the tolerance" if r.tolerance else ""
    return f"Measured: worst relative residual {r.residual:.2e} (tolerance {r.tolerance:.1e}{ratio}) {where}"


def _wrap(label: str, text: str) -> list[str]:
    return textwrap.wrap(text, _WIDTH, initial_indent=f"  {label}", subsequent_indent="    ")


def explain_report(report, convention=None) -> str:
    """Explanations of every failing check of ``report``; ``""`` when it passed.

    ``convention`` (``(sign, flow)`` or a :class:`hamcheck.Convention`, default
    ``(1, 1)``) states the results that carry no statement of their own.
    """
    if convention is None:
        convention = (1, 1)
    elif hasattr(convention, "sign"):
        convention = (convention.sign, convention.flow)
    failing = [r for r in report.results.values() if r.status in ("fail", "error")]
    extra = [f for f in report.findings if f.check not in report.results or report.results[f.check].status == "pass"]
    if not failing and not extra:
        return ""
    out = [f"Why {report.model} fails" + (f" ({report.source})" if report.source else "") + ":"]
    for r in failing:
        out.append(f"{r.name} ({'failed' if r.status == 'fail' else 'could not run'})")
        out += _wrap("Condition: ", _condition(r, convention))
        out += _wrap("", _measured(r))
        for f in report.findings:
            if f.check == r.name:
                out += _wrap(f"Likely cause [{f.kind}]: ", f.message)
        if r.replay:
            out.append(f"  Replay: {r.replay}")
    for f in extra:  # faults outside a failing check: raising sample(), NaN at some points
        out += _wrap(f"Also [{f.kind}]: ", f.message)
    return "\n".join(out)
