"""hamcheck.checks.action: the bracket relation of a left action, composition, identity, supplied fields."""

import pytest

from check_support import assert_diagnosed, assert_negative_control
from hamcheck.checks.action import CHECK


def test_negative_control(broken_mod):
    assert_negative_control(broken_mod, "action", "right_action")


@pytest.mark.parametrize(
    "name, expected",
    [
        ("right_action", {"right-action", "bracket-sign"}),
        ("bracket_flipped", {"bracket-sign"}),
        ("fields_mismatch", {"fields-mismatch"}),
    ],
)
def test_bundled_broken_models(broken_mod, name, expected):
    assert_diagnosed(broken_mod, name, expected)


def test_statement_follows_the_flow_sign():
    # a left action gives [X_xi, X_eta] = -flow X_[xi, eta] (README's convention section)
    assert "[X_a, X_b] = -X_[e_a,e_b]" in CHECK.state((1, 1))
    assert "(flow = -1): [X_a, X_b] = X_[e_a,e_b]" in CHECK.state((1, -1))
    assert CHECK.state((1, 1)) == CHECK.state((-1, 1))  # the sign of the moment equation does not enter
