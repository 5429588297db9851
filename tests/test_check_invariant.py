"""hamcheck.checks.invariant: L_X omega = 0."""

from check_support import assert_diagnosed, assert_negative_control
from hamcheck.checks.invariant import CHECK


def test_negative_control(broken_mod):
    assert_negative_control(broken_mod, "invariant", "not_invariant")


def test_bundled_broken_model(broken_mod):
    assert_diagnosed(broken_mod, "not_invariant", {"not-invariant"})


def test_finite_differences_widen_for_nested_differences():
    # vector fields derived from the action by differences, then differentiated again: about half the digits
    assert CHECK.tolerance.for_derivatives(traced=True) == 1e-12
    assert CHECK.tolerance.for_derivatives(traced=False) == 1e-6
    assert "nested differences" in CHECK.tolerance.finite_differences_reason
