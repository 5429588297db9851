"""localization: numerical integral beside the Duistermaat-Heckman / ABBV fixed-point sum.

References: docs/references.md rows F1 (oscillator), F3 (CP^n volume
pi^n/n!), F3b (CP^2 value 5.75961098939; small s in mpmath, 80 digits).
"""

import math

import mpmath
import numpy as np
import pytest

import hamcheck
from hamcheck import UsageError
from test_fixed_points import cpn, oscillator

XI = [0.37, -1.21]


def cpn_closed_form(xi, s, digits=80):
    """docs/references.md row F3b: (2 pi/s)^n sum_j exp(-s xi_j/2) / prod_{k != j}(xi_k - xi_j), xi_0 = 0 (mpmath)."""
    with mpmath.workdps(digits):
        x = [mpmath.mpf(0)] + [mpmath.mpf(v) for v in xi]
        s = mpmath.mpf(s)
        n = len(xi)
        tot = mpmath.fsum(
            mpmath.exp(-s * x[j] / 2) / mpmath.fprod([x[k] - x[j] for k in range(n + 1) if k != j]) for j in range(n + 1)
        )
        return float((2 * mpmath.pi / s) ** n * tot)


@pytest.fixture(scope="module")
def cp2():
    return cpn(2)


def test_cp2_reference_value(cp2):
    loc = hamcheck.localization(cp2, XI, 1.0, rtol=1e-6, starts=16)
    assert loc.fixed_point_sum == pytest.approx(5.75961098939, rel=1e-11)  # docs/references.md row F3b
    assert loc.integral == pytest.approx(5.75961098939, rel=1e-6)
    assert loc.relative_difference < 1e-6 and loc.agrees
    assert "Localization('CP2'" in repr(loc)


def test_cp2_small_s_against_mpmath(cp2):
    # docs/references.md row F3b: small s cancels badly in floats; the reference is evaluated with 80 digits
    s = 0.05
    ref = cpn_closed_form(XI, s)
    loc = hamcheck.localization(cp2, XI, s, rtol=1e-6, starts=16)
    assert loc.integral == pytest.approx(ref, rel=1e-6)
    # the float fixed-point sum loses ~ (1/s)^n digits of its inputs: 1e-12 * 400 still passes 1e-8
    assert loc.fixed_point_sum == pytest.approx(ref, rel=1e-8)


def test_cp2_volume(cp2):
    loc = hamcheck.localization(cp2, XI, 0.0, rtol=1e-6, starts=16)
    assert loc.integral == pytest.approx(math.pi**2 / 2, rel=1e-6)  # docs/references.md row F3: pi^n / n!
    # at s = 0 the fixed-point side is the order-n identity (2 pi)^n / n! sum_p <mu(p), xi>^n / e_p: the volume
    assert loc.fixed_point_sum == pytest.approx(math.pi**2 / 2, rel=1e-12) and loc.agrees
    assert "the volume" in loc.note


def test_oscillator_product_formula():
    # docs/references.md row F1: int exp(s mu^xi) = prod 2 pi / (s xi_k) for s xi_k > 0
    # (R^2: the 4-dim version is as exact but spends ~1e6 cubature nodes on the Gaussian tail)
    loc = hamcheck.localization(oscillator(1), [0.5], 1.0, rtol=1e-6, starts=4)
    ref = 2 * math.pi / 0.5
    assert loc.integral == pytest.approx(ref, rel=1e-6)
    assert loc.fixed_point_sum == pytest.approx(ref, rel=1e-12)


@pytest.mark.parametrize("n, factor", [(2, 2.0), (1, -1.0)])
def test_planted_moment_factor_or_sign_shows_mismatch(n, factor):
    # negative control: mu off by a factor (or sign) but otherwise consistent data -> visible mismatch.
    # The sign test uses CP^1: for even n, -mu with -omega has the same Liouville measure and the same
    # products of weights, so a global sign is invisible to localization (a fact of the formula).
    bad = cpn(n, mu_factor=factor, name=f"CP{n} mu*{factor:g}")
    loc = hamcheck.localization(bad, XI[:n], 1.0, rtol=1e-6, starts=16)
    assert loc.relative_difference > 0.05 and not loc.agrees


def test_bad_s(cp2):
    with pytest.raises(UsageError, match="real number"):
        hamcheck.localization(cp2, XI, "one")
