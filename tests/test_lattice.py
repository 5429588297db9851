"""lattice_count: lattice points of the moment polytope vs holomorphic Lefschetz.

Reference: H^0(CP^n, O(k)) = homogeneous polynomials of degree k in n+1
variables: binomial(n+k, n) (number of monomials, a fact of the trade).
"""

import math

import pytest

import hamcheck
from hamcheck import UsageError
from hamcheck.consequences.lattice import lefschetz_character
from test_fixed_points import cpn


@pytest.mark.parametrize("n, k", [(1, 3), (2, 2)])
def test_cpn_with_k_th_power(n, k):
    m = cpn(n, scale=2 * k, name=f"CP{n} O({k})")  # [omega / 2 pi] = k [hyperplane]
    lc = hamcheck.lattice_count(m, [f"t{j}" for j in range(1, n + 1)], starts=16)
    assert lc.lattice_points == lc.index == math.comb(n + k, n)
    assert lc.agree


def test_character_of_cp1_by_hand():
    # CP^1, O(2): fixed points at 0 (weight +1) and -2 (weight -1): chi = t^-2 + t^-1 + 1 (from memory)
    assert lefschetz_character([((0,), [(1,)]), ((-2,), [(-1,)])]) == {(0,): 1, (-1,): 1, (-2,): 1}
    # negative control: a planted wrong weight sign gives a different (virtual) character
    assert lefschetz_character([((0,), [(-1,)]), ((-2,), [(-1,)])]) != {(0,): 1, (-1,): 1, (-2,): 1}


def test_non_integral_moment_is_refused():
    with pytest.raises(UsageError, match="not integers"):
        hamcheck.lattice_count(cpn(1), ["t1"], starts=8)  # moment values 0 and -1/2
