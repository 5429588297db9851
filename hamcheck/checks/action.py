"""``action``: the vector fields come from a left action; with a finite action also its group laws.

``[X_a, X_b] = -flow X_[e_a, e_b]`` with the vector-field bracket ``[X, Y] = (DY)X - (DX)Y``;
with a finite action also ``g.(h.x) = (gh).x``, ``e.x = x``, and supplied vector
fields equal those derived from the action.

>>> from hamcheck.checks.action import CHECK
>>> "flow = -1" in CHECK.state((1, -1))
True
"""

from __future__ import annotations

import numpy as np

from .._jax import jnp
from ..diagnose import Diagnosis
from ._base import (
    GROUP_ELEMENTS, NESTED_DIFFERENCES, TINY, Check, Tolerance, group_elements, over_probes, row_relative, signed,
)


def statement(sign: int, flow: int) -> str:
    return (
        f"the vector fields come from a left action (flow = {flow:+d}): "
        f"[X_a, X_b] = {signed(-flow, 'X_[e_a,e_b]')} with the vector-field bracket [X, Y] = (DY)X - (DX)Y; "
        "with a finite action also g.(h.x) = (gh).x, e.x = x, and the declared vector fields "
        "agree with those of the action."
    )


def probes(model, rng, n, settings):
    k = model.algebra.dim
    out = {
        "xi": rng.standard_normal((n, settings.probes, k)),
        "eta": rng.standard_normal((n, settings.probes, k)),
    }
    if model.has_action:
        scale = settings.group_scale
        out["g"] = group_elements(model, rng, n, scale)
        out["h"] = group_elements(model, rng, n, scale)
    return out


def action(model, x, probe):
    """Bracket relation of the vector fields; with a finite action, composition and agreement."""
    ops = model.ops
    flow = model.convention.flow
    fields = model.fields_at(x)

    def one(xi, eta):
        # (DX_eta) X_xi and (DX_xi) X_eta from the fields' shared linearization at x
        t1 = eta @ ops.jvp(model.fields_at, x, xi @ fields)
        t2 = xi @ ops.jvp(model.fields_at, x, eta @ fields)
        br = t1 - t2
        target = flow * (model.algebra.bracket(xi, eta) @ fields)
        scale = jnp.abs(t1) + jnp.abs(t2) + jnp.abs(target)
        # a left action gives [X, Y] = -flow X_[]; the flipped relation is kept for the diagnosis
        return jnp.max(jnp.abs(br + target)), jnp.max(jnp.abs(br - target)), jnp.max(scale)

    left, right, dens = over_probes(model, one, probe["xi"], probe["eta"])
    den = jnp.maximum(jnp.max(dens), TINY)
    out = {"bracket": jnp.max(left) / den, "bracket_flipped": jnp.max(right) / den}
    parts = [out["bracket"]]
    if model.has_action:
        g, h = probe["g"], probe["h"]
        ident = jnp.eye(g.shape[0], dtype=g.dtype)
        # the four elements acting on x in one (mapped) call: XLA compiles every call site of the
        # action on its own, and an action that solves for its result (an orbit chart's Gauss-Newton
        # inverse) is most of this check's program
        hx, left, right, ex = over_probes(model, lambda G: model.action_at(G, x), jnp.stack([h, g @ h, h @ g, ident]))
        lhs = model.action_at(g, hx)
        sc = jnp.maximum(jnp.maximum(jnp.max(jnp.abs(lhs)), jnp.max(jnp.abs(left))), TINY)
        out["composition"] = jnp.max(jnp.abs(lhs - left)) / sc
        out["composition_right"] = jnp.max(jnp.abs(lhs - right)) / jnp.maximum(
            jnp.maximum(jnp.max(jnp.abs(lhs)), jnp.max(jnp.abs(right))), TINY
        )
        out["identity"] = jnp.max(jnp.abs(ex - x)) / jnp.maximum(jnp.max(jnp.abs(x)), 1.0)
        parts += [out["composition"], out["identity"]]
        if model.vector_fields is not None:
            sup = model.fields_at(x)
            der = model.action_fields_at(x)
            out["agreement"] = row_relative(sup - der, jnp.abs(sup) + jnp.abs(der))
            parts.append(out["agreement"])
    out["residual"] = jnp.max(jnp.stack(parts))
    return out


TOLERANCE = Tolerance(
    1e-10,
    "bracket relation of the fundamental vector fields, the composition law g.(h.x) = (gh).x and agreement "
    "of supplied and derived vector fields: " + GROUP_ELEMENTS,
    1e-6,
    NESTED_DIFFERENCES,
)


def _bracket(out, tol, flow):
    if not np.max(out["bracket"]) > tol:
        return [], []
    if not np.max(out["bracket_flipped"]) <= tol:
        return [f"bracket relation fails ({np.max(out['bracket']):.1e})"], []
    return ["bracket relation holds with the opposite sign"], [(
        "bracket-sign",
        f"the vector fields satisfy [X_a, X_b] = {'+' if flow == 1 else '-'}X_[e_a,e_b], the relation "
        f"of a right action or of the opposite flow sign (declared flow={flow:+d} expects "
        f"{'-' if flow == 1 else '+'}X_[e_a,e_b]). Fix: if the vector fields are d/dt exp(-t xi).x, "
        f"declare Convention(flow={-flow:+d}) or negate them; if the action is a right action, act "
        "by g^-1 instead",
        {"residual": float(np.max(out["bracket"])), "flipped_residual": float(np.max(out["bracket_flipped"]))},
    )]


def _composition(out, tol):
    if "composition" not in out or not np.max(out["composition"]) > tol:
        return [], []
    if not np.max(out["composition_right"]) <= tol:
        return [f"g.(h.x) != (gh).x ({np.max(out['composition']):.1e})"], []
    return ["composes as a right action"], [(
        "right-action",
        "action(g, x) composes as a right action: g.(h.x) = (hg).x. Fix: act by the inverse, "
        "action(g, x) -> action(inv(g), x), which is a left action (or transpose the matrix for an "
        "orthogonal group)",
        {"residual": float(np.max(out["composition"])), "right_residual": float(np.max(out["composition_right"]))},
    )]


def diagnose(ev) -> Diagnosis:
    if not ev.failed:
        return Diagnosis()
    tol, out = ev.tolerance, ev.out
    notes, findings = _bracket(out, tol, ev.model.convention.flow)
    more_notes, more = _composition(out, tol)
    notes, findings = notes + more_notes, findings + more
    if "identity" in out and np.max(out["identity"]) > tol:
        notes.append("action(identity, x) != x")
    if "agreement" in out and np.max(out["agreement"]) > tol:
        notes.append("supplied vector fields differ from those of the action")
        findings.append((
            "fields-mismatch",
            f"vector_fields(x) differ from flow * d/dt action(exp(t e_a), x) (relative {np.max(out['agreement']):.1e}). "
            "Fix: the supplied fields must include the flow sign of the convention; check signs and factors",
            {"residual": float(np.max(out["agreement"]))},
        ))
    return Diagnosis("; ".join(notes), tuple(findings))


CHECK = Check(
    "action", statement, action, TOLERANCE, diagnose=diagnose, probes=probes,
    finding_kinds=("right-action", "bracket-sign", "fields-mismatch"),
)
