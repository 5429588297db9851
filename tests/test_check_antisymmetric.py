"""hamcheck.checks.antisymmetric: omega_ij = -omega_ji."""

import numpy as np
import pytest

from check_support import assert_diagnosed, assert_negative_control
from hamcheck.checks.antisymmetric import CHECK
from hamcheck.differentiation import AUTODIFF


def test_negative_control(broken_mod):
    assert_negative_control(broken_mod, "antisymmetric", "not_antisymmetric")


def test_bundled_broken_model(broken_mod):
    assert_diagnosed(broken_mod, "not_antisymmetric", {"not-antisymmetric"})


class _Constant:
    traced, ops = True, AUTODIFF

    def __init__(self, W):
        self.form_at = lambda x: W


def test_residual_is_the_symmetric_part_over_the_form():
    # by definition (common practice): |W + W^T| / |W|; dx^dy + 0.5 I has symmetric part I and max entry 1
    W = np.array([[0.5, 1.0], [-1.0, 0.5]])
    assert float(CHECK.kernel(_Constant(W), np.zeros(2), {})["residual"]) == pytest.approx(1.0, rel=1e-15)
    assert float(CHECK.kernel(_Constant(W - 0.5 * np.eye(2)), np.zeros(2), {})["residual"]) == 0.0


def test_statement_does_not_depend_on_the_convention():
    assert CHECK.state((1, 1)) == CHECK.state((-1, -1))
    assert "omega_ij(x) = -omega_ji(x)" in CHECK.state((1, 1))
