"""From residuals to findings: what is wrong, and how to fix it.

One function per check. Each receives the check's :class:`Evidence` (its
per-point outputs at the finite points) and returns a status note and a list
of ``(kind, message, data)`` findings. Diagnoses are least-squares fits pooled
over all points: a sign, a factor per generator, a constant offset ``lambda``
of the moment map, a constant 2-cocycle. A fit is accepted only when its
relative misfit is below ``Tolerances.fit``; otherwise the failure is reported
without a guess.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .numerics import TINY, Tolerances

__all__ = ["Evidence", "DIAGNOSES", "FINDING_KINDS"]

#: Every kind of finding hamcheck reports. The first group are failures of the
#: mathematics; ``non-finite`` and ``raised`` are faults of user functions at
#: particular points.
FINDING_KINDS = (
    "moment-sign",
    "moment-scale",
    "moment-offset",
    "central-cocycle",
    "right-action",
    "bracket-sign",
    "fields-mismatch",
    "not-closed",
    "not-invariant",
    "degenerate",
    "not-antisymmetric",
    "non-finite",
    "raised",
    "flow-sign",
)


@dataclass
class Evidence:
    """What one check measured, restricted to the points where it is finite."""

    model: object
    points: np.ndarray  # (n, dim) chart coordinates
    out: dict  # kernel outputs, each (n, ...)
    residual: np.ndarray  # (n,)
    tolerance: float
    tolerances: Tolerances
    failed: bool
    worst: int  # index into points

    @property
    def worst_point(self) -> np.ndarray:
        return self.points[self.worst]


def _vec(v, digits=4) -> str:
    return "(" + ", ".join(f"{x:.{digits}g}" for x in np.atleast_1d(v)) + ")"


def _at(ev: Evidence) -> str:
    return f"at x = {_vec(ev.worst_point)}"


# --------------------------------------------------------------- per check
def antisymmetric(ev: Evidence):
    if not ev.failed:
        return "", []
    return "form(x) is not antisymmetric", [
        (
            "not-antisymmetric",
            f"form(x) + form(x)^T is {ev.residual[ev.worst]:.2e} of |form| {_at(ev)}; a 2-form's matrix must "
            "satisfy omega_ij = -omega_ji. Fix: return A - A^T for the intended coefficients A (mind the "
            "factor: dx^dy has matrix [[0, 1], [-1, 0]])",
            {"point": ev.worst_point, "residual": ev.residual[ev.worst]},
        )
    ]


def closed(ev: Evidence):
    if not ev.failed:
        return "", []
    return "d omega != 0", [
        (
            "not-closed",
            f"d omega does not vanish: relative residual {ev.residual[ev.worst]:.2e} {_at(ev)}. Fix: the "
            "coefficients of omega are not those of a closed form; recompute them (e.g. from a potential, "
            "omega = d theta or (i/2) d dbar K) and check each partial derivative",
            {"point": ev.worst_point, "residual": ev.residual[ev.worst]},
        )
    ]


def invariant(ev: Evidence):
    if not ev.failed:
        return "", []
    return "L_X omega != 0", [
        (
            "not-invariant",
            f"the group does not preserve omega: L_X omega has relative size {ev.residual[ev.worst]:.2e} "
            f"{_at(ev)}. Fix: check that the action (or the vector fields) is the one that preserves this "
            "form; a Hamiltonian action must be symplectic",
            {"point": ev.worst_point, "residual": ev.residual[ev.worst]},
        )
    ]


def nondegenerate(ev: Evidence):
    if not ev.failed:
        return "", []
    model = ev.model
    hint = " (dim is odd: no 2-form is nondegenerate in odd dimension)" if model.dim % 2 else ""
    return "omega degenerates", [
        (
            "degenerate",
            f"omega is degenerate{hint}: smallest relative singular value {ev.residual[ev.worst]:.2e} "
            f"{_at(ev)}. Fix: restrict the chart's domain (sample) away from this point, or correct the form",
            {"point": ev.worst_point, "ratio": ev.residual[ev.worst]},
        )
    ]


def moment_map(ev: Evidence):
    if not ev.failed:
        return "", []
    conv = ev.model.convention
    names = ev.model.algebra.names
    lr, rr, ll = (ev.out[k].sum(axis=0) for k in ("lr", "rr", "ll"))
    fits = rr > TINY
    lam = np.where(fits, lr / np.where(fits, rr, 1.0), np.nan)
    misfit = np.sqrt(np.maximum(ll - 2 * lam * lr + lam**2 * rr, 0.0) / np.maximum(ll, TINY))
    misfit = np.where(fits, misfit, np.where(ll > TINY, 1.0, 0.0))
    lam = np.where(fits, lam, np.where(ll > TINY, np.nan, 1.0))
    data = {"factors": lam, "misfit": misfit, "point": ev.worst_point}
    if not np.all(misfit <= ev.tolerances.fit) or not np.all(np.isfinite(lam)):
        bad = [names[a] for a in range(len(names)) if not misfit[a] <= ev.tolerances.fit]
        return (
            f"no constant factor explains it (generators {', '.join(bad)})",
            [],
        )
    if np.all(np.abs(lam + 1) <= ev.tolerances.fit * 10):
        return "mu has the opposite sign", [
            (
                "moment-sign",
                f"iota_X omega = -{'' if conv.sign == 1 else '-'}d mu: the moment map satisfies the moment "
                f"equation with the opposite sign for the declared convention (sign={conv.sign:+d}, "
                f"flow={conv.flow:+d}). Fix: negate the moment map, or declare "
                f"Convention(sign={-conv.sign:+d}, flow={conv.flow:+d})",
                data,
            )
        ]
    shown = _vec(lam)
    same = np.allclose(lam, lam[0], rtol=1e-6)
    how = (
        f"multiply mu by {lam[0]:.6g} (or divide omega by {lam[0]:.6g})"
        if same
        else f"multiply each component mu_a by the factor shown, {shown}"
    )
    return f"mu is off by factors {shown}", [
        (
            "moment-scale",
            f"the moment equation holds up to constant factors: iota_(X_a) omega = lam_a * sign * d mu_a with "
            f"lam = {shown} for ({', '.join(names)}). Fix: {how}",
            data,
        )
    ]


def equivariance(ev: Evidence):
    if not ev.failed:
        return "", []
    C = ev.model.algebra.structure_constants
    names = ev.model.algebra.names
    s = ev.model.convention.effective_sign
    coc = ev.out["cocycle"]
    scale = max(float(np.max(ev.out["scale"])), TINY)
    mean = coc.mean(axis=0)
    spread = float(np.max(np.abs(coc - mean))) / scale
    if spread > ev.tolerances.constant:
        return (
            f"omega(X_a, X_b) - s<mu, [e_a, e_b]> varies over the chart (spread {spread:.1e}), so it is not a "
            "constant shift; fix the moment equation first",
            [],
        )
    k = len(names)
    A = s * C.reshape(k * k, k)
    lam, *_ = np.linalg.lstsq(A, -mean.reshape(-1), rcond=None)
    misfit = np.linalg.norm(A @ lam + mean.reshape(-1)) / max(np.linalg.norm(mean), TINY)
    if misfit <= ev.tolerances.fit and np.any(C):
        return f"mu is shifted by a constant {_vec(lam)}", [
            (
                "moment-offset",
                f"the moment map is off by a constant: mu - lambda is equivariant for lambda = {_vec(lam)} "
                f"(components along {', '.join(names)}). Fix: subtract lambda from the moment map",
                {"offset": lam, "cocycle": mean, "misfit": misfit},
            )
        ]
    pairs = [f"c({names[a]},{names[b]}) = {mean[a, b]:.4g}" for a in range(k) for b in range(a + 1, k) if abs(mean[a, b]) > 1e-9 * scale]
    return "equivariant only for a central extension", [
        (
            "central-cocycle",
            "omega(X_a, X_b) - s<mu, [e_a, e_b]> is a constant 2-cocycle that is not a coboundary "
            f"({'; '.join(pairs)}): no constant shift of mu removes it. The moment map is equivariant only "
            "for the central extension of the algebra by this cocycle; declare the extended algebra (add a "
            "central generator) if that is intended",
            {"cocycle": mean, "misfit_as_coboundary": misfit},
        )
    ]


def action(ev: Evidence):
    if not ev.failed:
        return "", []
    tol = ev.tolerance
    out = ev.out
    flow = ev.model.convention.flow
    findings, notes = [], []
    if np.max(out["bracket"]) > tol:
        if np.max(out["bracket_flipped"]) <= tol:
            notes.append("bracket relation holds with the opposite sign")
            findings.append(
                (
                    "bracket-sign",
                    f"the vector fields satisfy [X_a, X_b] = {'+' if flow == 1 else '-'}X_[e_a,e_b], the relation "
                    f"of a right action or of the opposite flow sign (declared flow={flow:+d} expects "
                    f"{'-' if flow == 1 else '+'}X_[e_a,e_b]). Fix: if the vector fields are d/dt exp(-t xi).x, "
                    f"declare Convention(flow={-flow:+d}) or negate them; if the action is a right action, act "
                    "by g^-1 instead",
                    {"residual": float(np.max(out["bracket"])), "flipped_residual": float(np.max(out["bracket_flipped"]))},
                )
            )
        else:
            notes.append(f"bracket relation fails ({np.max(out['bracket']):.1e})")
    if "composition" in out and np.max(out["composition"]) > tol:
        if np.max(out["composition_right"]) <= tol:
            notes.append("composes as a right action")
            findings.append(
                (
                    "right-action",
                    "action(g, x) composes as a right action: g.(h.x) = (hg).x. Fix: act by the inverse, "
                    "action(g, x) -> action(inv(g), x), which is a left action (or transpose the matrix for an "
                    "orthogonal group)",
                    {"residual": float(np.max(out["composition"])), "right_residual": float(np.max(out["composition_right"]))},
                )
            )
        else:
            notes.append(f"g.(h.x) != (gh).x ({np.max(out['composition']):.1e})")
    if "identity" in out and np.max(out["identity"]) > tol:
        notes.append("action(identity, x) != x")
    if "agreement" in out and np.max(out["agreement"]) > tol:
        notes.append("supplied vector fields differ from those of the action")
        findings.append(
            (
                "fields-mismatch",
                f"vector_fields(x) differ from flow * d/dt action(exp(t e_a), x) (relative {np.max(out['agreement']):.1e}). "
                "Fix: the supplied fields must include the flow sign of the convention; check signs and factors",
                {"residual": float(np.max(out["agreement"]))},
            )
        )
    return "; ".join(notes), findings


def group_equivariance(ev: Evidence):
    if not ev.failed:
        return "", []
    return f"mu(g.x) != Ad*_g mu(x) (relative {ev.residual[ev.worst]:.1e} {_at(ev)})", []


def flow(ev: Evidence):
    if not ev.failed:
        return "", []
    out, tol = ev.out, ev.tolerance
    conv = ev.model.convention
    if np.max(out["field"]) > tol:
        return (
            f"the Hamiltonian vector field solved from omega and d<mu, xi> differs from X_xi (relative "
            f"{np.max(out['field']):.1e}); fix the moment equation first (see moment_map)",
            [],
        )
    if np.max(out["along"]) > tol and np.max(out["against"]) <= tol:
        return "the flow runs backwards", [
            (
                "flow-sign",
                f"the Hamiltonian flow of <mu, xi> moves points like exp(-t xi), the opposite of the declared "
                f"flow={conv.flow:+d} (relative distance {np.max(out['along']):.1e} to exp({'+' if conv.flow == 1 else '-'}t xi).x, "
                f"{np.max(out['against']):.1e} to the reverse). Fix: declare Convention(sign={-conv.sign:+d}, "
                f"flow={conv.flow:+d}) or negate the moment map together with the vector fields",
                {"along": float(np.max(out["along"])), "against": float(np.max(out["against"]))},
            )
        ]
    if np.max(out["along"]) > tol:
        return f"flow differs from exp(t xi).x by {np.max(out['along']):.1e} relative {_at(ev)}", []
    return f"moment components commuting with xi drift by {np.max(out['conserved']):.1e} along the flow", []


DIAGNOSES = {
    "antisymmetric": antisymmetric,
    "closed": closed,
    "invariant": invariant,
    "nondegenerate": nondegenerate,
    "moment_map": moment_map,
    "equivariance": equivariance,
    "action": action,
    "group_equivariance": group_equivariance,
    "flow": flow,
}
