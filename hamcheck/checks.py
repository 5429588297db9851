"""The axioms, one small check each.

A check is a pure per-point computation: ``kernel(model, x, probe)`` returns a
dict of arrays, always including ``"residual"`` (relative, see
:mod:`hamcheck.numerics`), plus whatever the diagnosis of that check needs.
``probe`` holds the random inputs of that point (directions, group elements),
drawn in numpy from the seed so that a run replays exactly. The runner
(:mod:`hamcheck.suite`) maps kernels over points with ``jax.lax.map`` inside
one ``jit``; nothing here prints or decides pass/fail.

Conventions (see :class:`hamcheck.Convention`): ``X_a`` are the fundamental
vector fields including the ``flow`` sign; ``s = sign * flow``.

* ``moment_map``:   ``X_a^i omega_ij = sign * d_j mu_a``
* ``equivariance``: ``omega(X_a, X_b) = s * <mu, [e_a, e_b]>``
* ``action``:       ``[X_a, X_b] = -flow * X_[e_a, e_b]`` with ``[X, Y] = (DY)X - (DX)Y``;
                    ``g.(h.x) = (gh).x``; supplied fields = derived fields
* ``invariant``:    ``L_{X_xi} omega = 0``
* ``closed``:       ``d omega = 0``

To add a check: write a kernel here, register a :class:`Check` in
:data:`CHECKS`, and (if it has diagnoses) a function in :mod:`hamcheck.diagnose`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

from ._jax import jax, jnp
from .numerics import TINY

__all__ = ["Check", "CHECKS", "CHECK_NAMES", "check_named"]


def _no_probe(model, rng, n, settings):
    return {}


def _always(model, settings):
    return None


@dataclass(frozen=True)
class Check:
    """One axiom: a per-point kernel, its random probes, and when it applies.

    ``higher_is_better`` is True for ``nondegenerate``, whose residual is the
    smallest relative singular value (it passes when *above* the tolerance).
    """

    name: str
    statement: str
    kernel: Callable
    probes: Callable = field(default=_no_probe)
    applies: Callable = field(default=_always)
    higher_is_better: bool = False


# ------------------------------------------------------------------ helpers
def _abs_matvec(A, v):
    return jnp.abs(A) @ jnp.abs(v)


def _over_probes(model, fn, *arrays):
    """Map ``fn`` over the leading axis of the probe arrays (vmap when traced)."""
    if model.traced:
        return jax.vmap(fn)(*arrays)
    rows = [fn(*args) for args in zip(*arrays)]
    return jax.tree_util.tree_map(lambda *r: jnp.stack(r), *rows)


def _row_relative(defect, scale):
    """Relative residual of a stack of rows, normalised by the largest scale."""
    return jnp.max(jnp.abs(defect)) / jnp.maximum(jnp.max(jnp.abs(scale)), TINY)


# ------------------------------------------------------------------ kernels
def antisymmetric(model, x, probe):
    W = model.form_at(x)
    return {"residual": _row_relative(W + W.T, W)}


def exterior_derivative(model, x):
    """``(d omega)_ijk = d_i omega_jk + d_j omega_ki + d_k omega_ij`` and the bound of its terms.

    >>> import hamcheck, numpy as np                      # doctest: +SKIP
    >>> d_omega, scale = exterior_derivative(model, np.zeros(model.dim))  # doctest: +SKIP
    """
    D = jnp.moveaxis(model.ops.jacobian(model.form_at, x), 2, 0)  # D[i,j,k] = d_i omega_jk
    A = D.transpose(1, 2, 0)
    B = D.transpose(2, 0, 1)
    return D + A + B, jnp.abs(D) + jnp.abs(A) + jnp.abs(B)


def closed_full(model, x, probe):
    """``d omega`` from the full derivative tensor (small dim)."""
    defect, scale = exterior_derivative(model, x)
    return {"residual": _row_relative(defect, scale)}


def closed_pairs(model, x, probe):
    """``d omega(u, v, .)`` as a whole covector for random pairs ``(u, v)``.

    Pairs keep full sensitivity at every dim where random triples dilute a
    sparse mistake like dim^-1.4 (measured).
    """
    form = model.form_at
    ops = model.ops

    def one(u, v):
        Du = ops.jvp(form, x, u)
        Dv = ops.jvp(form, x, v)
        g = ops.vjp(lambda y: u @ form(y) @ v, x, jnp.ones(()))
        defect = Du.T @ v + Dv @ u + g
        scale = _abs_matvec(Du.T, v) + _abs_matvec(Dv, u) + jnp.abs(g)
        return jnp.max(jnp.abs(defect)), jnp.max(scale)

    num, den = _over_probes(model, one, probe["u"], probe["v"])
    return {"residual": jnp.max(num) / jnp.maximum(jnp.max(den), TINY)}


def _direction_probes(model, rng, n, settings):
    m = settings.pairs
    return {"u": rng.standard_normal((n, m, model.dim)), "v": rng.standard_normal((n, m, model.dim))}


def closed(model, x, probe):
    return closed_pairs(model, x, probe) if "u" in probe else closed_full(model, x, probe)


def _closed_probes(model, rng, n, settings):
    if model.dim <= settings.full_tensor_max_dim:
        return {}
    return _direction_probes(model, rng, n, settings)


def nondegenerate(model, x, probe):
    s = jnp.linalg.svd(model.form_at(x), compute_uv=False)
    return {"residual": s[-1] / jnp.maximum(s[0], TINY), "smax": s[0]}


def moment_map(model, x, probe):
    W = model.form_at(x)
    X = model.fields_at(x)
    lhs = X @ W  # (iota_{X_a} omega)_j
    rhs = model.convention.sign * model.ops.jacobian(model.moment_at, x)
    scale = jnp.abs(X) @ jnp.abs(W) + jnp.abs(rhs)
    # pooled sums for the least-squares factor per generator: lhs ~ lam_a * rhs
    return {
        "residual": _row_relative(lhs - rhs, scale),
        "lr": jnp.sum(lhs * rhs, axis=1),
        "rr": jnp.sum(rhs * rhs, axis=1),
        "ll": jnp.sum(lhs * lhs, axis=1),
    }


def _xi_u_probes(model, rng, n, settings):
    m = settings.probes
    return {
        "xi": rng.standard_normal((n, m, model.algebra.dim)),
        "u": rng.standard_normal((n, m, model.dim)),
    }


def invariant(model, x, probe):
    """``(L_X omega)(u, .) = (D_X omega)^T u + omega^T (DX u) + DX^T (omega^T u)``."""
    W = model.form_at(x)
    ops = model.ops
    def one(xi, u):
        field_ = lambda y: xi @ model.fields_at(y)  # noqa: E731
        X = field_(x)
        DW = ops.jvp(model.form_at, x, X)
        DXu = ops.jvp(field_, x, u)
        t3 = ops.vjp(field_, x, W.T @ u)
        defect = DW.T @ u + W.T @ DXu + t3
        scale = _abs_matvec(DW.T, u) + _abs_matvec(W.T, DXu) + jnp.abs(t3)
        return jnp.max(jnp.abs(defect)), jnp.max(scale)

    num, den = _over_probes(model, one, probe["xi"], probe["u"])
    return {"residual": jnp.max(num) / jnp.maximum(jnp.max(den), TINY)}


def equivariance(model, x, probe):
    W = model.form_at(x)
    X = model.fields_at(x)
    mu = model.moment_at(x)
    C = jnp.asarray(model.algebra.structure_constants)
    s = model.convention.effective_sign
    lhs = X @ W @ X.T
    rhs = s * jnp.einsum("abc,c->ab", C, mu)
    cocycle = lhs - rhs
    scale = jnp.abs(X) @ jnp.abs(W) @ jnp.abs(X).T + jnp.einsum("abc,c->ab", jnp.abs(C), jnp.abs(mu))
    return {"residual": _row_relative(cocycle, scale), "cocycle": cocycle, "scale": jnp.max(scale)}


def _bracket_probes(model, rng, n, settings):
    k = model.algebra.dim
    out = {
        "xi": rng.standard_normal((n, settings.probes, k)),
        "eta": rng.standard_normal((n, settings.probes, k)),
    }
    if model.has_action:
        scale = settings.group_scale
        out["g"] = _group_elements(model, rng, n, scale)
        out["h"] = _group_elements(model, rng, n, scale)
    return out


def _group_elements(model, rng, n, scale):
    return model.algebra.random_group_elements(rng, n, scale)


def action(model, x, probe):
    """Bracket relation of the vector fields; with a finite action, composition and agreement."""
    ops = model.ops
    flow = model.convention.flow
    fields = model.fields_at(x)

    def one(xi, eta):
        Xxi = lambda y: xi @ model.fields_at(y)  # noqa: E731
        Xeta = lambda y: eta @ model.fields_at(y)  # noqa: E731
        t1 = ops.jvp(Xeta, x, xi @ fields)
        t2 = ops.jvp(Xxi, x, eta @ fields)
        br = t1 - t2
        target = flow * (model.algebra.bracket(xi, eta) @ fields)
        scale = jnp.abs(t1) + jnp.abs(t2) + jnp.abs(target)
        # a left action gives [X, Y] = -flow X_[]; the flipped relation is kept for the diagnosis
        return jnp.max(jnp.abs(br + target)), jnp.max(jnp.abs(br - target)), jnp.max(scale)

    left, right, dens = _over_probes(model, one, probe["xi"], probe["eta"])
    den = jnp.maximum(jnp.max(dens), TINY)
    out = {"bracket": jnp.max(left) / den, "bracket_flipped": jnp.max(right) / den}
    parts = [out["bracket"]]
    if model.has_action:
        g, h = probe["g"], probe["h"]
        lhs = model.action_at(g, model.action_at(h, x))
        left = model.action_at(g @ h, x)
        right = model.action_at(h @ g, x)
        sc = jnp.maximum(jnp.maximum(jnp.max(jnp.abs(lhs)), jnp.max(jnp.abs(left))), TINY)
        out["composition"] = jnp.max(jnp.abs(lhs - left)) / sc
        out["composition_right"] = jnp.max(jnp.abs(lhs - right)) / jnp.maximum(
            jnp.maximum(jnp.max(jnp.abs(lhs)), jnp.max(jnp.abs(right))), TINY
        )
        ident = jnp.eye(g.shape[0], dtype=g.dtype)
        ex = model.action_at(ident, x)
        out["identity"] = jnp.max(jnp.abs(ex - x)) / jnp.maximum(jnp.max(jnp.abs(x)), 1.0)
        parts += [out["composition"], out["identity"]]
        if model.vector_fields is not None:
            sup = model.fields_at(x)
            der = model.action_fields_at(x)
            out["agreement"] = _row_relative(sup - der, jnp.abs(sup) + jnp.abs(der))
            parts.append(out["agreement"])
    out["residual"] = jnp.max(jnp.stack(parts))
    return out


def _group_probes(model, rng, n, settings):
    return {"g": _group_elements(model, rng, n, settings.group_scale)}


def group_equivariance(model, x, probe):
    g = probe["g"]
    lhs = model.moment_at(model.action_at(g, x))
    rhs = model.algebra.coadjoint(g, model.moment_at(x))
    sc = jnp.maximum(jnp.maximum(jnp.max(jnp.abs(lhs)), jnp.max(jnp.abs(rhs))), TINY)
    return {"residual": jnp.max(jnp.abs(lhs - rhs)) / sc}


def _needs_action(model, settings):
    if not model.has_action:
        return "no finite action declared (give action(g, x) to test mu(g.x) = Ad*_g mu(x))"
    return None


# -------------------------------------------------------------------- flow
#: RK4 steps of the flow check over an arc of FLOW_ANGLE (|t xi| in matrix norm):
#: truncation error ~ (FLOW_ANGLE / FLOW_STEPS)^5 / 120 per step, about 1e-13.
FLOW_STEPS = 8
FLOW_ANGLE = 0.05
#: Singular values of ad_xi below this (relative) span the centralizer of xi.
FLOW_CENTRALIZER_RTOL = 1e-9


def _hamiltonian_field(model, y, xi):
    """``v`` with ``v^i omega_ij = sign d_j <mu, xi>`` (from the form and moment only)."""
    dH = jax.grad(lambda z: model.moment_at(z) @ xi)(y)
    return jnp.linalg.solve(model.form_at(y).T, model.convention.sign * dH)


def flow(model, x, probe):
    """The Hamiltonian flow of ``<mu, xi>`` (RK4 inside jit) vs ``action(exp(flow t xi), x)``.

    Also: the Hamiltonian vector field equals ``X_xi``, and the moment
    components commuting with ``xi`` are conserved along the integrated arc.
    """
    xi, t = probe["xi"], probe["t"]
    X = xi @ model.fields_at(x)
    v = _hamiltonian_field(model, x, xi)
    field = _row_relative(v - X, jnp.abs(v) + jnp.abs(X))
    h = t / FLOW_STEPS

    def rk4(_, y):
        f = lambda z: _hamiltonian_field(model, z, xi)  # noqa: E731
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


def _flow_probes(model, rng, n, settings):
    import numpy as _np

    import scipy.linalg

    xi = rng.standard_normal((n, model.algebra.dim))
    xi /= _np.linalg.norm(xi, axis=1, keepdims=True)
    mats = _np.einsum("na,aij->nij", xi, model.algebra.basis)
    t = FLOW_ANGLE / _np.maximum(_np.linalg.norm(mats, 2, axis=(1, 2)), 1e-300)
    # exp(+-flow t xi) in numpy (the matrix exponential is slow to compile and not differentiated here)
    step = model.convention.flow * t[:, None, None] * mats
    return {"xi": xi, "t": t, "ahead": scipy.linalg.expm(step), "behind": scipy.linalg.expm(-step)}


def _needs_flow(model, settings):
    if not model.has_action:
        return "no finite action declared (give action(g, x) to compare the Hamiltonian flow with exp(t xi).x)"
    if not model.traced:
        return "the flow check integrates inside jax; not available with finite differences"
    return None


# ---------------------------------------------------------------- registry
CHECKS: tuple[Check, ...] = (
    Check("antisymmetric", "omega_ij = -omega_ji: the form matrix is antisymmetric", antisymmetric),
    Check(
        "closed",
        "d omega = 0: d_i omega_jk + d_j omega_ki + d_k omega_ij vanishes",
        closed,
        probes=_closed_probes,
    ),
    Check(
        "nondegenerate",
        "omega is nondegenerate: its smallest singular value is not negligible against its largest",
        nondegenerate,
        higher_is_better=True,
    ),
    Check(
        "action",
        "the vector fields come from a left action: [X_a, X_b] = -flow X_[e_a,e_b] "
        "(and, with a finite action, g.(h.x) = (gh).x and e.x = x)",
        action,
        probes=_bracket_probes,
    ),
    Check("invariant", "the group preserves omega: L_{X_xi} omega = 0", invariant, probes=_xi_u_probes),
    Check(
        "moment_map",
        "the moment equation iota_{X_a} omega = sign d<mu, e_a>",
        moment_map,
    ),
    Check(
        "equivariance",
        "infinitesimal equivariance: omega(X_a, X_b) = sign*flow <mu, [e_a, e_b]>",
        equivariance,
    ),
    Check(
        "group_equivariance",
        "mu(g.x) = Ad*_g mu(x) at sampled group elements g",
        group_equivariance,
        probes=_group_probes,
        applies=_needs_action,
    ),
    Check(
        "flow",
        "the Hamiltonian flow of <mu, xi> (v^i omega_ij = sign d_j <mu, xi>) is exp(flow t xi).x, and conserves "
        "the moment components commuting with xi",
        flow,
        probes=_flow_probes,
        applies=_needs_flow,
    ),
)

CHECK_NAMES: tuple[str, ...] = tuple(c.name for c in CHECKS)


def check_named(name: str) -> Check:
    for c in CHECKS:
        if c.name == name:
            return c
    raise KeyError(name)
