"""hamcheck.numerics: Tolerances are built from the check modules, and stay public API."""

import dataclasses

import numpy as np
import pytest

import hamcheck
from hamcheck.checks import CHECKS
from hamcheck.numerics import FINITE_DIFFERENCE_TOLERANCES, TOLERANCES, Tolerances, relative

# the defaults and finite-difference values the project documents (README "Checks and findings"; docs/references.md, float64 numerics)
DEFAULTS = {
    "antisymmetric": 1e-12, "closed": 1e-12, "invariant": 1e-12, "moment_map": 1e-12, "equivariance": 1e-12,
    "action": 1e-10, "group_equivariance": 1e-10, "nondegenerate": 1e-10, "ill_conditioned": 1e-7, "fit": 1e-6,
    "constant": 1e-9, "basis": 1e-10, "flow": 1e-9,
}
WIDENED = {"closed": 1e-8, "moment_map": 1e-8, "equivariance": 1e-8, "invariant": 1e-6, "action": 1e-6,
           "fit": 1e-4, "constant": 1e-6}


def test_field_names_and_defaults_are_unchanged():
    assert {f.name: f.default for f in dataclasses.fields(Tolerances)} == DEFAULTS
    assert dataclasses.asdict(TOLERANCES) == DEFAULTS
    assert dataclasses.asdict(FINITE_DIFFERENCE_TOLERANCES) == DEFAULTS | WIDENED
    assert hamcheck.Tolerances is Tolerances and hamcheck.TOLERANCES is TOLERANCES


def test_each_check_has_a_tolerance_beside_it_with_a_reason():
    for c in CHECKS:
        assert TOLERANCES.for_check(c.name) == c.tolerance.default
        assert FINITE_DIFFERENCE_TOLERANCES.for_check(c.name) == c.tolerance.for_derivatives(traced=False)
        assert len(Tolerances.reasons[c.name]) > 40 and c.tolerance.reason in Tolerances.__doc__
    assert set(Tolerances.reasons) == set(DEFAULTS)


def test_replace_and_frozen():
    t = TOLERANCES.replace(closed=1e-10)
    assert t.closed == 1e-10 and TOLERANCES.closed == 1e-12 and t.basis_rtol == 1e-10
    with pytest.raises(TypeError):
        TOLERANCES.replace(closedness=1e-10)
    with pytest.raises(dataclasses.FrozenInstanceError):
        TOLERANCES.closed = 1.0


def test_relative_divides_by_the_bound_of_the_terms():
    # |1 - 1| / max(|1|, |1|) = 0 and |3 - 1| / 3 (common practice: relative error against the larger term)
    assert float(relative(np.array([1.0 - 1.0]), np.array([1.0, 1.0]))) == 0.0
    assert float(relative(np.array([2.0]), np.array([3.0, 1.0]))) == pytest.approx(2 / 3, rel=1e-15)
    assert float(relative(np.array([1e-300]), np.array([0.0]), floor=1.0)) == 1e-300
