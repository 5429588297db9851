"""Tests of hamcheck.loop_groups.truncated: the truncated loop algebra and a user's infinitesimal action.

References: docs/references.md, Loop groups (level-c cocycle c int <xi, eta'>).
"""

from __future__ import annotations

import numpy as np
import pytest

from hamcheck import circle
from hamcheck import loop_groups as af


def test_user_action_with_the_standard_level_has_ratio_one():
    alg = af.truncated_algebra(4, 1.5)
    rep = af.check_user_action(alg.bracket, alg.pairing, alg.action, 4, 1.5)
    assert rep.passed
    assert circle.central_ratio(rep) == pytest.approx(1.0, rel=1e-10)


@pytest.mark.parametrize("factor", [2 * np.pi, 0.5])
def test_user_action_with_a_wrong_level_factor_is_a_central_cocycle_finding(factor):
    # negative control: a factor 2 pi or 1/2 in the level shows up as the ratio
    alg = af.truncated_algebra(4, 1.5)

    def action(X, T):
        return alg.coefficients(af.SU2.bracket(alg.values(X), alg.values(T)) + factor * 1.5 * alg.derivative_values(X))

    rep = af.check_user_action(alg.bracket, alg.pairing, action, 4, 1.5)
    assert not rep.passed
    assert "central-cocycle" in [f.kind for f in rep.findings]
    assert circle.central_ratio(rep) == pytest.approx(factor, rel=1e-10)
