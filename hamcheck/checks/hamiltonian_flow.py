"""``flow``: the Hamiltonian flow of ``<mu, xi>`` is ``exp(flow t xi).x`` (needs a finite action and autodiff).

8 unrolled RK4 steps of the Hamiltonian field solved from omega over an arc
``|t xi| = 0.05``, compared with ``action(exp(flow t xi), x)`` (group elements
from the probes, computed in numpy); ``flow-sign`` comes from comparing with
``exp(-flow t xi)``. Also: the Hamiltonian field equals ``X_xi``, and the moment
components commuting with ``xi`` are conserved along the arc. (The module is
not named ``flow`` so that it is not confused with ``Convention.flow`` or
:func:`hamcheck.flow`; the check's name stays ``flow``.)

>>> from hamcheck.checks.hamiltonian_flow import CHECK
>>> CHECK.name, CHECK.tolerance.default
('flow', 1e-09)
"""

from __future__ import annotations

import numpy as np

from .._fields import hamiltonian_field
from .._jax import jnp
from ..diagnose import Diagnosis, at
from ._base import TINY, Check, Tolerance, row_relative, signed

#: RK4 steps of the flow check over an arc of FLOW_ANGLE (|t xi| in matrix norm):
#: truncation error ~ (FLOW_ANGLE / FLOW_STEPS)^5 / 120 per step, about 1e-13.
FLOW_STEPS = 8
FLOW_ANGLE = 0.05
#: Singular values of ad_xi below this (relative) span the centralizer of xi.
FLOW_CENTRALIZER_RTOL = 1e-9


def statement(sign: int, flow: int) -> str:
    return (
        f"the Hamiltonian flow of <mu, xi> (v^i omega_ij = {signed(sign, 'd_j <mu, xi>')}) is "
        f"exp({signed(flow, 't xi')}).x, and conserves the moment components commuting with xi."
    )


def hamiltonian_flow(model, x, probe):
    """The Hamiltonian flow of ``<mu, xi>`` (RK4 inside jit) vs ``action(exp(flow t xi), x)``.

    Also: the Hamiltonian vector field equals ``X_xi``, and the moment
    components commuting with ``xi`` are conserved along the integrated arc.
    """
    xi, t = probe["xi"], probe["t"]
    X = xi @ model.fields_at(x)
    v = hamiltonian_field(model, x, xi)
    field = row_relative(v - X, jnp.abs(v) + jnp.abs(X))
    h = t / FLOW_STEPS

    def rk4(_, y):
        f = lambda z: hamiltonian_field(model, z, xi)  # noqa: E731
        k1 = f(y)
        k2 = f(y + 0.5 * h * k1)
        k3 = f(y + 0.5 * h * k2)
        k4 = f(y + h * k3)
        return y + (h / 6.0) * (k1 + 2.0 * k2 + 2.0 * k3 + k4)

    # unrolled on purpose: a while loop with linear solves inside the one vmapped program of
    # check() deadlocked XLA's CPU runtime (seen with jaxlib 0.10.2 on CP^8)
    y = x
    for i in range(FLOW_STEPS):
        y = rk4(i, y)
    ahead = model.action_at(probe["ahead"], x)
    behind = model.action_at(probe["behind"], x)
    size = jnp.maximum(jnp.maximum(jnp.max(jnp.abs(x)), jnp.max(jnp.abs(y))), TINY)
    along = jnp.max(jnp.abs(y - ahead)) / jnp.maximum(size, jnp.max(jnp.abs(ahead)))
    against = jnp.max(jnp.abs(y - behind)) / jnp.maximum(size, jnp.max(jnp.abs(behind)))
    ad = jnp.einsum("a,abc->cb", xi, jnp.asarray(model.algebra.structure_constants))
    _, s, vt = jnp.linalg.svd(ad)
    keep = (s <= FLOW_CENTRALIZER_RTOL * jnp.maximum(s[0], TINY)).astype(x.dtype)
    mu0, mu1 = model.moment_at(x), model.moment_at(y)
    drift = (vt.T * keep) @ (vt @ (mu1 - mu0))
    conserved = jnp.max(jnp.abs(drift)) / jnp.maximum(jnp.maximum(jnp.max(jnp.abs(mu0)), jnp.max(jnp.abs(mu1))), TINY)
    return {
        "residual": jnp.max(jnp.stack([field, along, conserved])),
        "field": field,
        "along": along,
        "against": against,
        "conserved": conserved,
    }


def probes(model, rng, n, settings):
    import scipy.linalg

    xi = rng.standard_normal((n, model.algebra.dim))
    xi /= np.linalg.norm(xi, axis=1, keepdims=True)
    mats = np.einsum("na,aij->nij", xi, model.algebra.basis)
    t = FLOW_ANGLE / np.maximum(np.linalg.norm(mats, 2, axis=(1, 2)), 1e-300)
    # exp(+-flow t xi) in numpy (the matrix exponential is slow to compile and not differentiated here)
    step = model.convention.flow * t[:, None, None] * mats
    return {"xi": xi, "t": t, "ahead": scipy.linalg.expm(step), "behind": scipy.linalg.expm(-step)}


def applies(model, settings):
    if not model.has_action:
        return "no finite action declared (give action(g, x) to compare the Hamiltonian flow with exp(t xi).x)"
    if not model.traced:
        return "the flow check integrates inside jax; not available with finite differences"
    return None


TOLERANCE = Tolerance(
    1e-9,
    "the flow integrated by 8 RK4 steps over an arc |t xi| = 0.05 against action(exp(flow t xi), x), relative "
    "to the size of the point: RK4 truncation is ~1e-13 and the matrix exponential adds ~1e-14 (measured "
    "6e-13 on the plane, 6e-12 on a CP^2 chart), while a wrong flow sign gives ~0.1",
)


def diagnose(ev) -> Diagnosis:
    if not ev.failed:
        return Diagnosis()
    out, tol = ev.out, ev.tolerance
    conv = ev.model.convention
    if np.max(out["field"]) > tol:
        return Diagnosis(
            f"the Hamiltonian vector field solved from omega and d<mu, xi> differs from X_xi (relative "
            f"{np.max(out['field']):.1e}); fix the moment equation first (see moment_map)"
        )
    if np.max(out["along"]) > tol and np.max(out["against"]) <= tol:
        return Diagnosis("the flow runs backwards", ((
            "flow-sign",
            f"the Hamiltonian flow of <mu, xi> moves points like exp(-t xi), the opposite of the declared "
            f"flow={conv.flow:+d} (relative distance {np.max(out['along']):.1e} to exp({'+' if conv.flow == 1 else '-'}t xi).x, "
            f"{np.max(out['against']):.1e} to the reverse). Fix: declare Convention(sign={-conv.sign:+d}, "
            f"flow={conv.flow:+d}) or negate the moment map together with the vector fields",
            {"along": float(np.max(out["along"])), "against": float(np.max(out["against"]))},
        ),))
    if np.max(out["along"]) > tol:
        return Diagnosis(f"flow differs from exp(t xi).x by {np.max(out['along']):.1e} relative {at(ev)}")
    return Diagnosis(f"moment components commuting with xi drift by {np.max(out['conserved']):.1e} along the flow")


CHECK = Check(
    "flow", statement, hamiltonian_flow, TOLERANCE, diagnose=diagnose, probes=probes, applies=applies,
    finding_kinds=("flow-sign",), own_program=True,
)
