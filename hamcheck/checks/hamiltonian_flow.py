"""``flow``: the Hamiltonian flow of ``<mu, xi>`` is ``exp(flow t xi).x`` (needs a finite action and autodiff).

The Hamiltonian field solved from omega is integrated over an arc
``|t xi| = 0.05`` by an explicit Runge-Kutta method of order 8 (Dormand and
Prince's, its tableau as data) with step doubling (1, 2, 4, ... steps in a
``lax`` loop, one traced stage), until two successive solutions agree to
``FLOW_ERROR_TARGET``, 100x below the default tolerance; their difference is the
integrator's error estimate. The end point is compared with
``action(exp(flow t xi), x)`` (group elements from the probes, computed in
numpy); ``flow-sign`` comes from comparing with ``exp(-flow t xi)``. Where the
estimate cannot reach the target within ``FLOW_MAX_STEPS`` (a stiff or badly
scaled flow), a defect is counted only beyond ``FLOW_TRUST_FACTOR`` times the
estimate, and a diagnosis of trust says so: the check never fails on its own
truncation error. Also: the Hamiltonian field equals ``X_xi``, and the moment
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
from .._jax import jax, jnp
from ..diagnose import Diagnosis, at
from . import _dop853
from ._base import TINY, Check, Tolerance, row_relative, signed

#: Arc of the comparison, |t xi| in matrix norm: long enough that a backwards flow moves the point
#: by ~0.1 of its displacement scale, short enough that one or two steps resolve it.
FLOW_ANGLE = 0.05
#: Step doubling starts from this many steps and stops at FLOW_MAX_STEPS (order 8: one step over the
#: arc is ~1e-16 for a unit rotation rate; 64 steps resolve a rotation by 5 rad over the arc, measured).
FLOW_FIRST_STEPS = 1
FLOW_MAX_STEPS = 64
#: The integrator's estimated error (relative, like the residual) is driven below this:
#: 100x below the default tolerance 1e-9.
FLOW_ERROR_TARGET = 1e-11
#: Where the target is not reached, a defect counts only above this many times the estimate
#: (the step-doubling difference over-estimates the finer solution's error by about 2^8 - 1 = 255 for an
#: order-8 method, common practice).
FLOW_TRUST_FACTOR = 100.0
#: Singular values of ad_xi below this (relative) span the centralizer of xi.
FLOW_CENTRALIZER_RTOL = 1e-9


def statement(sign: int, flow: int) -> str:
    return (
        f"the Hamiltonian flow of <mu, xi> (v^i omega_ij = {signed(sign, 'd_j <mu, xi>')}) is "
        f"exp({signed(flow, 't xi')}).x, and conserves the moment components commuting with xi."
    )


def _stage_matrix(rows):
    A = np.zeros((len(rows), len(rows)))
    for i, row in enumerate(rows):
        for j, a in row.items():
            A[i, j] = a
    return A


#: The Butcher tableau of the integrator (stage matrix, weights) and its order: Dormand and
#: Prince's order-8 method (Hairer, Norsett and Wanner, *Solving Ordinary Differential
#: Equations I*, 2nd ed., 1993, sec. II.10), as data in ``_dop853.py``.
TABLEAU_A, TABLEAU_B, ORDER = _stage_matrix(_dop853.A_ROWS), np.asarray(_dop853.B), _dop853.ORDER


def runge_kutta(field, x, t, n):
    """``n`` steps of the explicit Runge-Kutta method ``(TABLEAU_A, TABLEAU_B)`` for ``y' = field(y)`` over ``[0, t]``.

    Written once for any explicit tableau; the stages run in a ``lax`` loop, so
    one evaluation of ``field`` is traced however many stages the method has
    (small programs compile fast).
    """
    A, B = jnp.asarray(TABLEAU_A), jnp.asarray(TABLEAU_B)
    stages = A.shape[0]
    h = t / n

    def step(_, y):
        def stage(i, K):
            # row i of A is zero from column i on: only earlier stages enter
            return K.at[i].set(field(y + h * (A[i] @ K)))

        K = jax.lax.fori_loop(0, stages, stage, jnp.zeros((stages,) + y.shape, y.dtype))
        return y + h * (B @ K)

    return jax.lax.fori_loop(0, n, step, x)


def integrate(field, x, t, estimate, target=FLOW_ERROR_TARGET):
    """``runge_kutta`` for ``y' = field(y)`` from ``x`` over ``[0, t]`` with step doubling.

    Returns ``(y, y_coarse, steps)``: the solution with ``steps`` steps and the
    one with half as many. ``estimate(y, y_coarse)`` measures their difference,
    the error estimate (it bounds the error of the finer solution with a margin
    of about ``2^ORDER - 1``); doubling stops when it is at most ``target`` or at
    ``FLOW_MAX_STEPS``.
    """

    def unresolved(state):
        level, n, coarse, y = state
        # at least two solutions before judging; a non-finite estimate stops (reported as non-finite)
        return (level < 2) | ((estimate(y, coarse) > target) & (n < FLOW_MAX_STEPS))

    def refine(state):
        level, n, _, y = state
        m = jnp.where(level == 0, jnp.int32(FLOW_FIRST_STEPS), 2 * n)
        return level + 1, m, y, runge_kutta(field, x, t, m)

    init = (jnp.int32(0), jnp.int32(0), x, x)
    _, steps, coarse, y = jax.lax.while_loop(unresolved, refine, init)
    return y, coarse, steps


def hamiltonian_flow(model, x, probe):
    """The Hamiltonian flow of ``<mu, xi>`` (order-8 Runge-Kutta with step doubling) vs ``action(exp(flow t xi), x)``.

    Also: the Hamiltonian vector field equals ``X_xi``, and the moment
    components commuting with ``xi`` are conserved along the integrated arc.
    ``error`` and ``conserved_error`` are the integrator's estimates of its own
    error in ``along`` and ``conserved``.
    """
    xi, t = probe["xi"], probe["t"]
    X = xi @ model.fields_at(x)
    v = hamiltonian_field(model, x, xi)
    field = row_relative(v - X, jnp.abs(v) + jnp.abs(X))
    ad = jnp.einsum("a,abc->cb", xi, jnp.asarray(model.algebra.structure_constants))
    _, s, vt = jnp.linalg.svd(ad)
    keep = (s <= FLOW_CENTRALIZER_RTOL * jnp.maximum(s[0], TINY)).astype(x.dtype)
    centralizer = vt.T * keep @ vt
    mu0 = model.moment_at(x)

    def size(y):
        return jnp.maximum(jnp.maximum(jnp.max(jnp.abs(x)), jnp.max(jnp.abs(y))), TINY)

    def mu_size(mu):
        return jnp.maximum(jnp.maximum(jnp.max(jnp.abs(mu0)), jnp.max(jnp.abs(mu))), TINY)

    def errors(y, coarse):
        """The estimates for ``along`` and ``conserved``: what changed between the two step counts."""
        mu1 = model.moment_at(y)
        drift = jnp.max(jnp.abs(centralizer @ (mu1 - model.moment_at(coarse)))) / mu_size(mu1)
        return jnp.max(jnp.abs(y - coarse)) / size(y), drift

    y, coarse, steps = integrate(
        lambda z: hamiltonian_field(model, z, xi), x, t, lambda y, c: jnp.maximum(*errors(y, c))
    )
    # both elements in one (mapped) call of the action: each call site is compiled on its own
    ahead, behind = jax.vmap(lambda G: model.action_at(G, x))(jnp.stack([probe["ahead"], probe["behind"]]))
    along = jnp.max(jnp.abs(y - ahead)) / jnp.maximum(size(y), jnp.max(jnp.abs(ahead)))
    against = jnp.max(jnp.abs(y - behind)) / jnp.maximum(size(y), jnp.max(jnp.abs(behind)))
    mu1 = model.moment_at(y)
    conserved = jnp.max(jnp.abs(centralizer @ (mu1 - mu0))) / mu_size(mu1)
    error, conserved_error = errors(y, coarse)
    return {
        "residual": jnp.max(jnp.stack([field, trusted(along, error), trusted(conserved, conserved_error)])),
        "field": field,
        "along": along,
        "against": against,
        "conserved": conserved,
        "error": error,
        "conserved_error": conserved_error,
        "steps": steps,
    }


def trusted(defect, error):
    """``defect`` where the integration reached its target or the defect is far beyond its error, else 0.

    Works on jax and numpy arrays alike.
    """
    controlled = error <= FLOW_ERROR_TARGET
    beyond = defect > FLOW_TRUST_FACTOR * error
    return defect * (controlled | beyond)


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
    "the flow integrated by an order-8 Runge-Kutta method over an arc |t xi| = 0.05 against action(exp(flow t xi), x), relative to the "
    "size of the point: step doubling drives the integrator's estimated error below 1e-11 (100x below), the "
    "matrix exponential adds ~1e-14, while a wrong flow sign gives ~0.1",
)


def _integration_trust(ev) -> tuple:
    """Trust notes: points where the integrator missed its target, or a tolerance it cannot resolve."""
    out, tol = ev.out, ev.tolerance
    error = np.fmax(out["error"], out["conserved_error"])
    missed = np.flatnonzero(~(error <= FLOW_ERROR_TARGET))
    notes = []
    if missed.size:
        i = missed[np.argmax(np.nan_to_num(error[missed], nan=np.inf))]
        notes.append((
            "flow-unresolved",
            f"at {missed.size} of {error.size} points the order-{ORDER} Runge-Kutta method with {int(np.max(out['steps']))} steps estimated its "
            f"own error at {error[i]:.1e} (target {FLOW_ERROR_TARGET:.0e}; worst at x = "
            f"{np.array2string(ev.points[i], precision=4)}): the flow there is stiff or badly scaled for an "
            f"arc |t xi| = {FLOW_ANGLE}, so a defect counted only beyond {FLOW_TRUST_FACTOR:.0f}x that estimate",
            {"points": ev.points[missed], "error": error[missed]},
        ))
    resolved = error[~(error > FLOW_ERROR_TARGET)]
    if resolved.size and FLOW_TRUST_FACTOR * np.max(resolved) > tol:
        notes.append((
            "flow-tolerance",
            f"the flow tolerance {tol:.1e} is less than {FLOW_TRUST_FACTOR:.0f}x the integrator's estimated error "
            f"{np.max(resolved):.1e}: a failure near the tolerance may be the integrator's own",
            {"error": float(np.max(resolved)), "tolerance": tol},
        ))
    return tuple(notes)


def diagnose(ev) -> Diagnosis:
    trust = _integration_trust(ev)
    if not ev.failed:
        return Diagnosis(trust=trust)
    out, tol = ev.out, ev.tolerance
    conv = ev.model.convention
    along = trusted(out["along"], out["error"])
    if np.max(out["field"]) > tol:
        return Diagnosis(
            f"the Hamiltonian vector field solved from omega and d<mu, xi> differs from X_xi (relative "
            f"{np.max(out['field']):.1e}); fix the moment equation first (see moment_map)", trust=trust,
        )
    # the reverse is reached within the integrator's accuracy
    reverse = np.all(out["against"] <= np.maximum(tol, FLOW_TRUST_FACTOR * out["error"]))
    if np.max(along) > tol and reverse:
        return Diagnosis("the flow runs backwards", ((
            "flow-sign",
            f"the Hamiltonian flow of <mu, xi> moves points like exp(-t xi), the opposite of the declared "
            f"flow={conv.flow:+d} (relative distance {np.max(along):.1e} to exp({'+' if conv.flow == 1 else '-'}t xi).x, "
            f"{np.max(out['against']):.1e} to the reverse). Fix: declare Convention(sign={-conv.sign:+d}, "
            f"flow={conv.flow:+d}) or negate the moment map together with the vector fields",
            {"along": float(np.max(along)), "against": float(np.max(out["against"]))},
        ),), trust)
    if np.max(along) > tol:
        return Diagnosis(f"flow differs from exp(t xi).x by {np.max(along):.1e} relative {at(ev)}", trust=trust)
    return Diagnosis(
        f"moment components commuting with xi drift by {np.max(out['conserved']):.1e} along the flow", trust=trust
    )


CHECK = Check(
    "flow", statement, hamiltonian_flow, TOLERANCE, diagnose=diagnose, probes=probes, applies=applies,
    finding_kinds=("flow-sign",), own_program=True,
)
