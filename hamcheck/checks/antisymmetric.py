"""``antisymmetric``: the form matrix satisfies ``omega_ij = -omega_ji``.

>>> from hamcheck.checks.antisymmetric import CHECK
>>> CHECK.state((1, 1))
'the form matrix is antisymmetric: omega_ij(x) = -omega_ji(x) for all i, j.'
"""

from __future__ import annotations

from ..diagnose import fails_at_worst
from ._base import Check, Tolerance, row_relative


def statement(sign: int, flow: int) -> str:
    return "the form matrix is antisymmetric: omega_ij(x) = -omega_ji(x) for all i, j."


def antisymmetric(model, x, probe):
    W = model.form_at(x)
    return {"residual": row_relative(W + W.T, W)}


TOLERANCE = Tolerance(
    1e-12,
    "relative size of omega + omega^T; no derivative is involved, so the float64 floor (<= 3e-16 measured up "
    "to dim 512) is the only error and 1e-12 leaves a factor 500+",
    finite_differences=None,
    finite_differences_reason="no derivative involved",
)

diagnose = fails_at_worst(
    "form(x) is not antisymmetric",
    "not-antisymmetric",
    "form(x) + form(x)^T is {r:.2e} of |form| {where}; a 2-form's matrix must satisfy omega_ij = -omega_ji. "
    "Fix: return A - A^T for the intended coefficients A (mind the factor: dx^dy has matrix [[0, 1], [-1, 0]])",
)

CHECK = Check(
    "antisymmetric", statement, antisymmetric, TOLERANCE, diagnose=diagnose, finding_kinds=("not-antisymmetric",)
)
