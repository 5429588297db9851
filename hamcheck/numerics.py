"""Tolerances, relative residuals and the two ways of differentiating a model.

Every tolerance hamcheck uses lives in :class:`Tolerances`, with the reason for
its default. Residuals are *relative*: a defect divided by a bound on the
absolute values of the terms that make it up (never by the signed sum, whose
terms cancel and would fake a floor). Autodiff residuals of true identities sit
at 1e-17 to 3e-16 on this kind of machine up to dim 512; the defaults are
1e-12, at least 500x above every measured floor and far below any real mistake
(a wrong sign gives 1 to 2, a wrong factor 0.3 to 1).

Example
-------
>>> from hamcheck.numerics import TOLERANCES
>>> TOLERANCES.moment_map
1e-12
>>> TOLERANCES.replace(moment_map=1e-10).moment_map
1e-10
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

__all__ = ["Tolerances", "TOLERANCES", "FINITE_DIFFERENCE_TOLERANCES", "relative"]

TINY = np.finfo(np.float64).tiny


@dataclass(frozen=True)
class Tolerances:
    """Named tolerances. Each is a relative residual unless said otherwise.

    Attributes
    ----------
    antisymmetric, closed, invariant, moment_map, equivariance:
        Relative residual of an identity between first derivatives computed by
        autodiff. Default 1e-12: measured floors are <= 3e-16 (closedness,
        moment equation) up to dim 512, so 1e-12 leaves a factor 500+.
    action:
        Bracket relation of the fundamental vector fields, the composition law
        ``g.(h.x) = (gh).x`` and agreement of supplied and derived vector
        fields. Default 1e-10: it involves the matrix exponential and
        inverse of sampled group elements, whose round-off grows with their
        norm (1e-14 seen at the default sampling scale).
    group_equivariance:
        ``mu(g.x) = Ad*_g mu(x)`` at sampled group elements; 1e-10 for the
        same reason as ``action``.
    nondegenerate:
        Smallest over largest singular value of the form matrix below which a
        point counts as degenerate. Default 1e-10: a singular matrix gives
        about ``dim * 1e-16``; larger values are genuine (if ill-conditioned)
        nondegenerate forms.
    ill_conditioned:
        Ratio below which a point is nondegenerate but the residuals of other
        checks there lose digits; reported as a diagnosis of trust, not as a
        failure. Default 1e-7.
    fit:
        Relative misfit below which a diagnosis (sign, scale, offset,
        constant cocycle) is accepted. Default 1e-6: fits pool many points and
        their misfit of an exact relation is ~1e-14; a wrong diagnosis misfits
        by O(1).
    constant:
        Spread of the equivariance cocycle across points, relative to its
        scale, below which it counts as constant. Default 1e-9.
    basis:
        Linear independence and closure of a matrix basis (relative). 1e-10.
    flow:
        The Hamiltonian flow of ``<mu, xi>`` integrated by 8 RK4 steps over an
        arc ``|t xi| = 0.05`` against ``action(exp(flow t xi), x)``, relative to
        the size of the point. Default 1e-9: RK4 truncation is ~1e-13 and the
        matrix exponential adds ~1e-14 (measured 6e-13 on the plane, 6e-12 on a CP^2
        chart), while a wrong flow sign gives ~0.1.
    """

    antisymmetric: float = 1e-12
    closed: float = 1e-12
    invariant: float = 1e-12
    moment_map: float = 1e-12
    equivariance: float = 1e-12
    action: float = 1e-10
    group_equivariance: float = 1e-10
    nondegenerate: float = 1e-10
    ill_conditioned: float = 1e-7
    fit: float = 1e-6
    constant: float = 1e-9
    basis: float = 1e-10
    flow: float = 1e-9

    def replace(self, **changes) -> "Tolerances":
        """A copy with some tolerances changed (unknown names raise TypeError)."""
        return dataclasses.replace(self, **changes)

    def for_check(self, name: str) -> float:
        return getattr(self, name)

    # kept for the algebra builders, which run before any model exists
    @property
    def basis_rtol(self) -> float:
        return self.basis


TOLERANCES = Tolerances()

#: Tolerances used when a model opts into finite differences. Central
#: differences at the best step reach 3e-11 to 7e-11 relative (measured with
#: numpy on this kind of machine); 1e-8 sits 100x above that floor and still
#: far below real mistakes. The report marks every result computed this way.
FINITE_DIFFERENCE_TOLERANCES = Tolerances(
    antisymmetric=1e-12,  # no derivative involved
    closed=1e-8,
    moment_map=1e-8,
    equivariance=1e-8,  # through vector fields that may themselves be differences of the action
    # differences of vector fields that are themselves differences of the action (nested
    # differences) lose about half the digits: 2e-8 measured on the numpy sphere
    invariant=1e-6,
    action=1e-6,
    group_equivariance=1e-10,  # no derivative involved
    fit=1e-4,
    constant=1e-6,
)


def relative(defect, scale, floor=0.0):
    """``max|defect| / max(max|scale|, floor, tiny)`` with jax or numpy arrays.

    ``scale`` must bound the absolute values of the terms whose signed sum is
    ``defect``; ``floor`` guards against dividing round-off by round-off.
    """
    from ._jax import jnp

    num = jnp.max(jnp.abs(defect))
    den = jnp.maximum(jnp.maximum(jnp.max(jnp.abs(scale)), floor), TINY)
    return num / den
