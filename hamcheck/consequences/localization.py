"""Duistermaat-Heckman / Atiyah-Bott-Berline-Vergne: the integral beside the fixed-point sum.

``int_M exp(s <mu, xi>) omega^n/n! = (2 pi / s)^n sum_p exp(s <mu(p), xi>) / prod_k w_k(p)``
with ``w_k = sign * flow * alpha_k`` (``alpha_k`` the weights of
:func:`hamcheck.fixed_points`; positive ``w`` = local maximum). The left side
is integrated numerically over the chart's domain
(:mod:`hamcheck.consequences.integration`), the right side is summed from the
fixed points found in every chart of the atlas. A moment map off by a factor
or a sign shows as a relative difference far above the integration error; a
chart missing a fixed point (at infinity) fails the identities of a compact
space first (:class:`~hamcheck.consequences.fixed_points.Completeness`), and the
result says so in ``note`` instead of reporting a mismatch.

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
from ._common import algebra_vector, fmt, require_model
from .fixed_points import FixedPoints, fixed_points, localization_terms
from .integration import integrate

__all__ = ["Localization", "localization", "fixed_point_sum"]


@dataclass(frozen=True, eq=False)
class Localization:
    """The integral with its error estimate, the fixed-point side, and their relative difference.

    ``fixed_point_sum`` and ``relative_difference`` are None when the fixed-point
    side was not compared; ``note`` then says why in one line (fixed points
    missing from the chart, or not isolated). ``note`` also says what the
    fixed-point side is at ``s = 0`` (the volume from the order-n identity).
    """

    model: str
    xi: tuple
    s: float
    integral: float
    error: float
    fixed_point_sum: float | None
    relative_difference: float | None
    fixed_points: FixedPoints
    method: str
    domain: str
    evaluations: int
    note: str = ""

    @property
    def agrees(self) -> bool | None:
        """True when the two sides differ by less than 10 error estimates (plus round-off); None when not compared."""
        if self.fixed_point_sum is None:
            return None
        return _agree(self.integral, self.error, self.fixed_point_sum)

    def __repr__(self) -> str:
        head = f"Localization({self.model!r}, s={self.s:g}: integral={self.integral:.12g} +- {self.error:.1e}, "
        if self.fixed_point_sum is None:
            return head + f"fixed-point side not compared: {self.note})"
        note = f"; {self.note}" if self.note else ""
        return head + (
            f"fixed-point sum={self.fixed_point_sum:.12g} over {len(self.fixed_points)} points, "
            f"relative difference={self.relative_difference:.1e}{note})"
        )


#: Round-off allowance of the comparison, relative to the integral: the fixed-point sum is good to
#: ~1e-13 (weights and values from eigenvalues and polished zeros), far below the cubature's error.
SUM_RTOL = 1e-10


def _agree(integral, error, fsum) -> bool:
    return abs(integral - fsum) <= 10 * error + SUM_RTOL * abs(integral)


def fixed_point_sum(fps: FixedPoints, s: float, n: int) -> float:
    """``(2 pi / s)^n sum_p exp(s value_p) / e_p``, and at ``s = 0`` its limit ``(2 pi)^n / n! sum_p value_p^n / e_p``.

    The limit is the volume when the fixed points are complete (the orders
    below ``n`` cancel then, see :class:`~hamcheck.consequences.fixed_points.Completeness`).
    Raises :class:`~hamcheck.UsageError` when a fixed point is not isolated.
    """
    if not fps.isolated:
        raise UsageError(
            f"the fixed points of xi = {fmt(fps.xi)} are not isolated: the fixed-point formula needs isolated "
            "fixed points (choose a generic xi)"
        )
    if s == 0:
        return (2 * math.pi) ** n / math.factorial(n) * math.fsum(localization_terms(fps, n, centred=False))
    terms = [math.exp(s * p.value) / p.euler for p in fps]
    return (2 * math.pi / s) ** n * math.fsum(terms)


def localization(model, xi, s, *, rtol: float = 1e-8, samples: int = 2**14, starts: int = 64, seed: int = 0) -> Localization:
    """Integrate ``exp(s <mu, xi>) omega^n/n!`` and compare with the fixed-point sum.

    ``rtol`` steers adaptive cubature (dim <= 4); ``samples`` the Sobol points
    per randomization above that. The integral runs over the main chart, the
    fixed points come from every chart of the atlas (``Model(charts=...)``).
    ``s = 0`` gives the volume, compared with ``(2 pi)^n / n! sum_p <mu(p), xi>^n / e_p``.
    When the fixed points found fail the identities of a compact space and the
    sum does not match, the sides are not compared and ``note`` says that fixed
    points are missing from the chart.
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
    n = model.dim // 2
    fps = fixed_points(model, xi, starts=starts, seed=seed)
    integral = integrate(model, xi, s, rtol=rtol, samples=samples, seed=seed)
    c = fps.completeness
    fsum, note = None, ""
    if not fps.isolated:
        note = f"the fixed points of xi = {fmt(xi)} are not isolated; the formula needs isolated ones (choose a generic xi)"
    elif s == 0 and c.complete is not True:
        note = "at s = 0 the fixed-point side is the volume formula, which holds when the identities do: " + c.note
    else:
        fsum = fixed_point_sum(fps, s, n)
        if s == 0:
            note = "s = 0: fixed-point side (2 pi)^n / n! sum_p <mu(p), xi>^n / e_p(xi), the volume"
        elif c.complete is False:
            if _agree(integral.value, integral.error, fsum):
                note = (
                    f"the fixed points fail the identities of a compact space (residual {c.residual:.2g}), yet the sum "
                    "matches the integral: the space is not compact, and localization holds without them"
                )
            else:
                note = f"{c.note} (sum over the points found: {fsum:.6g})"
                fsum = None
        elif c.complete is None:
            note = "fixed points " + c.note
    rel = None if fsum is None else abs(integral.value - fsum) / max(abs(fsum), abs(integral.value), 1e-300)
    return Localization(
        model.name, tuple(float(v) for v in xi), s, integral.value, integral.error, fsum, rel, fps, integral.method,
        integral.domain, integral.evaluations, note,
    )
