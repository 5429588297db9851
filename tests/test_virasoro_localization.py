"""Tests of hamcheck.virasoro.localization: rotation weights at the sl2 point, zeta regularisation.

References: docs/references.md, Virasoro (weights n = 2, 3, ...; zeta values; counterterm limit), mpmath.
"""

import math

import mpmath
import numpy as np
import pytest

from hamcheck import virasoro


def test_rotation_weights_at_the_sl2_point():
    # references.md, Virasoro: weights n = 2, 3, ...; T0 = c/4 is a local maximum of int T for c > 0
    w, hess = virasoro.rotation_weights(1.0, 5)
    assert w == pytest.approx([2, 3, 4, 5], rel=1e-12)
    assert np.all(hess < 0)


def test_zeta_values_and_regularised_product():
    # references.md, Virasoro / mpmath: zeta(0) - 1 = -3/2, -zeta'(0) = log sqrt(2 pi), prod = t^{3/2}/(2pi)^2 to 20 digits
    with mpmath.workdps(30):
        assert mpmath.zeta(0) - 1 == -1.5
        assert mpmath.almosteq(-mpmath.zeta(0, derivative=1), mpmath.log(mpmath.sqrt(2 * mpmath.pi)), 1e-25)
    for t in (0.5, 1.0, 3.0):
        reg, closed = virasoro.zeta_one_loop(t)
        assert mpmath.almosteq(reg, closed, 1e-20)


def test_counterterm_limit_with_error_one_over_12N():
    # references.md, Virasoro: L_N(lam) -> -(3/2) log lam + (1/2) log 2pi with error 1/(12N) (Stirling, from memory:
    # next term -1/(360 N^3))
    for lam in (0.5, 2.0):
        for N in (50, 400):
            err = virasoro.counterterm_sum(lam, N) - virasoro.counterterm_limit(lam)
            assert err == pytest.approx(1 / (12 * N), abs=1 / (300 * N**3))
    # negative control: a plain cutoff (no counterterms) gives the wrong power
    plain = sum(math.log(2.0 * n) for n in range(2, 401))
    assert abs(plain - virasoro.counterterm_limit(2.0)) > 100
