"""The Hamiltonian vector field of a moment component, solved from omega (shared by checks and consequences).

>>> import hamcheck, jax.numpy as jnp, numpy as np                         # doctest: +SKIP
>>> hamiltonian_field(model, jnp.zeros(model.dim), np.eye(model.algebra.dim)[0])   # doctest: +SKIP
"""

from __future__ import annotations

from ._jax import jax, jnp

__all__ = ["hamiltonian_field"]


def hamiltonian_field(model, x, xi):
    """Solve ``v^i omega_ij = sign d_j <mu, xi>`` for ``v`` (from the form and moment only; equals ``X_xi`` in a correct model)."""
    W = model.form_at(x)
    dH = jax.grad(lambda y: model.moment_at(y) @ xi)(x)
    return jnp.linalg.solve(W.T, model.convention.sign * dH)
