"""reduce: Marsden-Weinstein hypotheses at sampled level-set points, dimension and volume.

Reference: finite.md row 7: C^{n+1} // U(1) at |z|^2 = 2r is CP^n with volume (2 pi r)^n / n!.
"""

import math

import pytest

import hamcheck
from test_fixed_points import oscillator


@pytest.fixture(scope="module")
def c3():
    return oscillator(3)


def test_c3_reduced_by_diagonal_circle(c3):
    r = 1.5
    red = hamcheck.reduce(c3, [-r], [[1.0, 1.0, 1.0]], samples=6)
    assert red.regular and red.locally_free and red.kernel_is_orbit
    assert red.dim == 4
    assert red.volume == pytest.approx((2 * math.pi * r) ** 2 / 2, rel=1e-9)  # finite.md row 7


def test_level_zero_is_not_regular(c3):
    # negative control: the level 0 of |z|^2 is the origin, a critical point and a fixed point
    red = hamcheck.reduce(c3, [0.0], [[1.0, 1.0, 1.0]], samples=3)
    assert not red.regular and not red.locally_free
