"""Plain-language explanations of failing checks, in the model's own convention.

Each failing (or erroring) check becomes a short paragraph: the condition that
was tested, written with the model's ``sign`` and ``flow`` substituted; the
worst relative residual against its tolerance and the point where it
occurred; the diagnoses that name a likely cause; and the replay command.
Suitable for handing back to whoever wrote the model.

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


def _signed(s: int, term: str) -> str:
    """``term`` or ``-term`` according to the sign ``s``."""
    return term if s > 0 else f"-{term}"


def statement(check: str, convention=(1, 1), fallback: str = "") -> str:
    """The condition a check tests, in words, with ``convention = (sign, flow)`` substituted."""
    sign, flow = convention
    s = sign * flow
    templates = {
        "antisymmetric": "the form matrix is antisymmetric: omega_ij(x) = -omega_ji(x) for all i, j.",
        "closed": (
            "omega is closed, d omega = 0: d_i omega_jk + d_j omega_ki + d_k omega_ij = 0 for all i, j, k, "
            "where d_i is the derivative along the chart coordinate x_i."
        ),
        "nondegenerate": (
            "omega is nondegenerate: the matrix omega_ij(x) is invertible everywhere. The residual is its "
            "smallest singular value relative to its typical largest one, and must stay ABOVE the tolerance."
        ),
        "action": (
            f"the vector fields come from a left action (flow = {flow:+d}): "
            f"[X_a, X_b] = {_signed(-flow, 'X_[e_a,e_b]')} with the vector-field bracket [X, Y] = (DY)X - (DX)Y; "
            "with a finite action also g.(h.x) = (gh).x, e.x = x, and the declared vector fields "
            "agree with those of the action."
        ),
        "invariant": "the action preserves omega: the Lie derivative L_{X_a} omega = 0 for every basis element e_a.",
        "moment_map": (
            f"the moment equation, with sign = {sign:+d}: X_a^i omega_ij = {_signed(sign, 'd_j mu_a')} for every "
            "basis element e_a (contract the fundamental vector field X_a into the FIRST slot of omega; "
            f"the result must be {'' if sign > 0 else 'minus '}the differential of the component mu_a = <mu, e_a>)."
        ),
        "equivariance": (
            f"infinitesimal equivariance, with sign*flow = {s:+d}: omega(X_a, X_b) = "
            f"{_signed(s, '<mu, [e_a, e_b]>')} for all pairs a, b. A constant mismatch means mu is off by a "
            "constant (or is equivariant only for a central extension)."
        ),
        "group_equivariance": (
            "equivariance under the group: mu(g.x) = Ad*_g mu(x), i.e. <mu(g.x), e_b> = <mu(x), Ad_{g^-1} e_b>, "
            "at sampled group elements g."
        ),
    }
    return templates.get(check, fallback or f"the {check} check.")


def _point(p) -> str:
    return "(" + ", ".join(f"{v:.4g}" for v in p) + ")" if p is not None else "(no point)"


def _measured(r) -> str:
    if r.status == "error":
        return f"It could not be evaluated: {r.message.removeprefix('could not run: ')}"
    if r.residual is None:
        return r.message
    if r.name == "nondegenerate":
        return (
            f"Measured: smallest relative singular value {r.residual:.2e} (must be >= {r.tolerance:.1e}) "
            f"at x = {_point(r.worst_point)}, over {r.points} points."
        )
    ratio = f", {r.residual / r.tolerance:.1e} times the tolerance" if r.tolerance else ""
    return (
        f"Measured: worst relative residual {r.residual:.2e} (tolerance {r.tolerance:.1e}{ratio}) "
        f"at x = {_point(r.worst_point)}, over {r.points} points."
    )


def _wrap(label: str, text: str) -> list[str]:
    return textwrap.wrap(text, _WIDTH, initial_indent=f"  {label}", subsequent_indent="    ")


def explain_report(report, convention=None) -> str:
    """Explanations of every failing check of ``report``; ``""`` when it passed."""
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
        out += _wrap("Condition: ", statement(r.name, convention, r.statement))
        out += _wrap("", _measured(r))
        for f in report.findings:
            if f.check == r.name:
                out += _wrap(f"Likely cause [{f.kind}]: ", f.message)
        if r.replay:
            out.append(f"  Replay: {r.replay}")
    for f in extra:  # faults outside a failing check: raising sample(), NaN at some points
        out += _wrap(f"Also [{f.kind}]: ", f.message)
    return "\n".join(out)
