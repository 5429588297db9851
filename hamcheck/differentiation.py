"""The two ways of taking derivatives of a model's functions.

Checks are written once against the small interface below (``jvp``, ``vjp``,
``jacobian``). :data:`AUTODIFF` uses jax (exact to round-off, jit and vmap
across points). :class:`FiniteDifferences` is the documented fallback for
functions written in plain numpy: central differences, evaluated point by
point, with the widened tolerances of
:data:`hamcheck.numerics.FINITE_DIFFERENCE_TOLERANCES`. A model uses it only
when declared with ``derivatives="finite-differences"``; nothing switches to it
silently.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._jax import jax, jnp

__all__ = ["Autodiff", "FiniteDifferences", "AUTODIFF"]


class Autodiff:
    """Forward and reverse mode derivatives by jax."""

    name = "autodiff"
    traced = True

    @staticmethod
    def jvp(f, x, v):
        return jax.jvp(f, (x,), (v,))[1]

    @staticmethod
    def vjp(f, x, w):
        return jax.vjp(f, x)[1](w)[0]

    @staticmethod
    def jacobian(f, x):
        return jax.jacfwd(f)(x)


@dataclass(frozen=True)
class FiniteDifferences:
    """Central differences with a step relative to the size of the point.

    ``step`` 2e-5 is where numpy central differences of smooth test forms
    reached their best accuracy (3e-11 to 7e-11 relative) on this kind of
    machine.
    """

    step: float = 2e-5
    name = "finite-differences"
    traced = False

    def _h(self, x, v):
        vmax = float(np.max(np.abs(v)))
        if vmax == 0.0:
            return None
        return self.step * (1.0 + float(np.max(np.abs(x)))) / vmax

    def jvp(self, f, x, v):
        x = np.asarray(x)
        v = np.asarray(v)
        h = self._h(x, v)
        if h is None:
            return jnp.zeros_like(jnp.asarray(f(x)))
        return (jnp.asarray(f(x + h * v)) - jnp.asarray(f(x - h * v))) / (2 * h)

    def jacobian(self, f, x):
        x = np.asarray(x, dtype=float)
        cols = [self.jvp(f, x, e) for e in np.eye(x.shape[0])]
        return jnp.stack(cols, axis=-1)

    def vjp(self, f, x, w):
        J = self.jacobian(f, x)
        return jnp.tensordot(jnp.asarray(w), J, axes=jnp.ndim(w))



AUTODIFF = Autodiff()
