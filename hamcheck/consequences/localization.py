"""Duistermaat-Heckman / Atiyah-Bott-Berline-Vergne: the integral beside the fixed-point sum.

``int_M exp(s <mu, xi>) omega^n/n! = (2 pi / s)^n sum_p exp(s <mu(p), xi>) / prod_k w_k(p)``
with ``w_k = sign * flow * alpha_k`` (``alpha_k`` the weights of
:func:`hamcheck.fixed_points`; positive ``w`` = local maximum). The left side
is integrated numerically over the chart's domain
(:mod:`hamcheck.consequences.integration`), the right side is summed from the
fixed points found in the chart. A moment map off by a factor or a sign, or
a chart missing a fixed point, shows as a relative difference far above the
integration error.

Example
-------
>>> loc = hamcheck.localization(cp2, [0.37, -1.21], 1.0)        # doctest: +SKIP
>>> loc.integral, loc.fixed_point_sum                           # doctest: +SKIP
(5.7596109..., 5.7596109...)
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import UsageError
from ._common import algebra_vector, require_model
from .fixed_points import FixedPoints, fixed_points
from .integration import integrate

__all__ = ["Localization", "localization", "fixed_point_sum"]


@dataclass(frozen=True, eq=False)
class Localization:
    """The integral with its error estimate, the fixed-point sum, and their relative difference."""

    model: str
    xi: tuple
    s: float
    integral: float
    error: float
    fixed_point_sum: float
    relative_difference: float
    fixed_points: FixedPoints
    method: str
    domain: str
    evaluations: int

    @property
    def agrees(self) -> bool:
        """True when the two sides differ by less than 10 error estimates (plus round-off)."""
        return abs(self.integral - self.fixed_point_sum) <= 10 * self.error + 1e-10 * abs(self.integral)

    def __repr__(self) -> str:
        return (
            f"Localization({self.model!r}, s={self.s:g}: integral={self.integral:.12g} +- {self.error:.1e}, "
            f"fixed-point sum={self.fixed_point_sum:.12g} over {len(self.fixed_points)} points, "
            f"relative difference={self.relative_difference:.1e})"
        )


def fixed_point_sum(fps: FixedPoints, s: float, n: int) -> float:
    """``(2 pi / s)^n sum_p exp(s value_p) / prod_k w_k(p)``; NaN if a point is not isolated."""
    if not fps.isolated or s == 0:
        return float("nan")
    terms = [
        math.exp(s * p.value) / math.prod(p.hessian_weights) if p.hessian_weights else math.exp(s * p.value)
        for p in fps
    ]
    return (2 * math.pi / s) ** n * math.fsum(terms)


def localization(model, xi, s, *, rtol: float = 1e-8, samples: int = 2**14, starts: int = 64, seed: int = 0) -> Localization:
    """Integrate ``exp(s <mu, xi>) omega^n/n!`` and compare with the fixed-point sum.

    ``rtol`` steers adaptive cubature (dim <= 4); ``samples`` the Sobol points
    per randomization above that. ``s = 0`` gives the volume (the fixed-point
    sum is then NaN: the formula needs ``s != 0``).
    """
    require_model(model, "localization")
    try:
        s = float(s)
    except (TypeError, ValueError):
        raise UsageError(f"s must be a real number; got {s!r}") from None
    if not math.isfinite(s):
        raise UsageError(f"s must be finite; got {s}")
    if model.dim % 2:
        raise UsageError(f"localization needs an even-dimensional chart; {model.name!r} has dim {model.dim}")
    xi = algebra_vector(model, xi)
    fps = fixed_points(model, xi, starts=starts, seed=seed)
    integral = integrate(model, xi, s, rtol=rtol, samples=samples, seed=seed)
    fsum = fixed_point_sum(fps, s, model.dim // 2)
    rel = abs(integral.value - fsum) / max(abs(fsum), abs(integral.value), 1e-300) if math.isfinite(fsum) else float("nan")
    return Localization(
        model.name, tuple(float(v) for v in xi), s, integral.value, integral.error, fsum, rel, fps, integral.method,
        integral.domain, integral.evaluations,
    )
