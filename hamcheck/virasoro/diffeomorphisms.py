"""Lifted diffeomorphisms of the circle and the coadjoint action on Hill potentials.

``F(theta + 2pi) = F(theta) + 2pi``, ``F' > 0``, acts on ``(T, c)`` by the pullback
``Phi_F T = (T o F) F'^2 + (c/2) S(F)``, ``S(F) = F'''/F' - (3/2)(F''/F')^2``
(a right action: ``Phi_G Phi_F = Phi_{F o G}``); infinitesimally
``delta_X T = X T' + 2 X' T + (c/2) X'''``, with the bracket ``[X, Y] = X'Y - XY'``
and the Gelfand–Fuchs cocycle ``GF(X, Y) = (1/2) int X' Y''``.

>>> import numpy as np
>>> F = Diffeo.from_real_modes([1], a=[0.0], b=[0.2])
>>> T = transform(0.0, 2.0, F, M=64)          # Phi_F 0 = (c/2) S(F) = S(F) at c = 2
>>> bool(np.allclose(T, schwarzian(F, 64)))
True
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import circle
from .._jax import jnp
from ..errors import UsageError

__all__ = [
    "Diffeo",
    "schwarzian_from_derivatives",
    "schwarzian",
    "transform",
    "delta",
    "bracket",
    "gelfand_fuchs",
]


@dataclass(frozen=True)
class Diffeo:
    """A lifted diffeomorphism ``F(theta) = theta + u(theta)``, u a trigonometric polynomial.

    >>> import numpy as np
    >>> F = Diffeo.from_real_modes([1, 2], a=[0.1, 0.0], b=[0.0, 0.05])
    >>> bool(F.min_derivative() > 0)
    True
    """

    displacement: circle.Periodic

    @classmethod
    def from_real_modes(cls, modes, a, b, a0: float = 0.0) -> "Diffeo":
        return cls(circle.Periodic.from_real_modes(modes, a, b, a0))

    @classmethod
    def random(cls, rng, modes=(1, 2, 3), strength: float = 0.5) -> "Diffeo":
        """A random diffeomorphism with ``max |u'| <= strength < 1`` (so ``F' >= 1 - strength``)."""
        if not 0 < strength < 1:
            raise UsageError(f"strength must be in (0, 1) so that F' > 0; got {strength}")
        modes = np.asarray(modes, dtype=int)
        a, b = rng.standard_normal(modes.size), rng.standard_normal(modes.size)
        scale = strength * rng.uniform(0.5, 1.0) / np.sum(modes * (np.abs(a) + np.abs(b)))
        return cls.from_real_modes(modes, scale * a, scale * b, rng.uniform(-np.pi, np.pi))

    def __call__(self, theta, derivative: int = 0):
        u = self.displacement(theta, derivative)
        if derivative == 0:
            return theta + u
        if derivative == 1:
            return 1.0 + u
        return u

    def min_derivative(self, M: int = 1024) -> float:
        return float(np.min(self(circle.grid(M), 1)))


def _as_periodic(T, what="T") -> circle.Periodic:
    if isinstance(T, circle.Periodic):
        return T
    if callable(T):
        return circle.Periodic.from_function(T, 1024).trimmed()
    arr = np.asarray(T, dtype=float) if not np.iscomplexobj(np.asarray(T)) else None
    if arr is None:
        raise UsageError(f"{what} must be real; got complex values")
    if arr.ndim == 0:
        if not np.isfinite(arr):
            raise UsageError(f"{what} must be finite; got {float(arr)}")
        return circle.Periodic(np.array([complex(arr)]), np.array([0]), True)
    if arr.ndim != 1:
        raise UsageError(f"{what} must be a number, 1-d samples on a uniform grid, a callable or a Periodic; got shape {arr.shape}")
    return circle.Periodic.from_samples(arr).trimmed()


def _check_c(c) -> float:
    return circle.coupling(c, "central charge c")


def schwarzian_from_derivatives(F1, F2, F3):
    """``S(F) = F'''/F' - (3/2)(F''/F')^2`` from the derivatives (jax or numpy)."""
    return F3 / F1 - 1.5 * (F2 / F1) ** 2


def schwarzian(F, M: int = 256) -> np.ndarray:
    """Samples of ``S(F)`` on M grid points for a :class:`Diffeo` (exact derivatives)."""
    th = circle.grid(M)
    return np.asarray(schwarzian_from_derivatives(F(th, 1), F(th, 2), F(th, 3)))


def transform(T, c, F: Diffeo, M: int = 256) -> np.ndarray:
    """Samples of ``Phi_F T = (T o F) F'^2 + (c/2) S(F)`` on M grid points.

    ``T o F`` is evaluated exactly for a trigonometric polynomial T (samples
    are interpolated spectrally, a callable is called at F(theta_j)).
    """
    c = _check_c(c)
    th = circle.grid(M)
    Fv = F(th)
    TF = np.asarray(T(Fv)) if callable(T) and not isinstance(T, circle.Periodic) else _as_periodic(T)(Fv)
    F1, F2, F3 = F(th, 1), F(th, 2), F(th, 3)
    return TF * F1**2 + 0.5 * c * schwarzian_from_derivatives(F1, F2, F3)


def delta(X, T, c):
    """``delta_X T = X T' + 2 X' T + (c/2) X'''`` on grid samples (jax, spectral derivatives)."""
    X, T = jnp.asarray(X), jnp.asarray(T)
    return X * circle.derivative(T) + 2 * circle.derivative(X) * T + 0.5 * c * circle.derivative(X, 3)


def bracket(X, Y):
    """``[X, Y] = X'Y - XY'`` on grid samples (jax)."""
    return circle.derivative(X) * Y - X * circle.derivative(Y)


def gelfand_fuchs(X, Y):
    """``GF(X, Y) = (1/2) int X' Y'' dtheta`` on grid samples (jax)."""
    return 0.5 * circle.integrate(circle.derivative(X) * circle.derivative(Y, 2))
