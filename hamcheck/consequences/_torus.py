"""Torus data shared by the image, reduction and lattice modules."""

from __future__ import annotations

import numpy as np

from .._jax import jax, jnp, quick_jit
from ._common import check_commuting, compiled, subalgebra_basis
from .fixed_points import line_decomposition

#: Coefficients of the generic element sum_j c_j t_j of a torus: rationally
#: independent in practice, so its fixed points are those of the whole torus.
GENERIC = np.array([1.0, 0.5 ** 0.5, 3.0 ** 0.5 / 7, 0.1 * 5 ** 0.5, 0.3 * 11 ** 0.5, 0.07 * 13 ** 0.5, 0.9 ** 3, 0.05 * 17 ** 0.5])


def torus_basis(model, torus, what="torus"):
    B = subalgebra_basis(model, torus, what)
    check_commuting(model, B, what)
    return B


def generic_element(B):
    c = np.resize(GENERIC, B.shape[0]) * (1 + 0.01 * np.arange(B.shape[0]))
    return c @ B


def weight_vectors(model, p, B, xi):
    """Weights ``alpha_k(t_j)`` (n x m) of the torus on the lines of ``(T_pM, J)``."""
    alphas, V, isolated = line_decomposition(model, p, xi)
    lin = compiled(model, "torus_linearization", lambda m: quick_jit(jax.jacfwd(lambda x, e: e @ m.fields_at(x))))
    flow = model.convention.flow
    out = np.zeros((V.shape[1], B.shape[0]))
    for j, b in enumerate(B):
        L = flow * np.asarray(lin(jnp.asarray(p), jnp.asarray(b)))
        for k in range(V.shape[1]):
            v = V[:, k]
            out[k, j] = np.real(np.vdot(v, L @ v) / (1j * np.vdot(v, v)))
    return out, isolated
