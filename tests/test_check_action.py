"""hamcheck.checks.action: the bracket relation of a left action, composition, identity, supplied fields."""

import pytest

import hamcheck

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


def _sphere_chart_cap(sphere_mod, radius):
    """The bundled sphere whose action is declared only where the image stays in the chart disc |x| < radius."""
    import jax.numpy as jnp

    def capped(g, x):
        y = sphere_mod.rotate(g, x)
        return jnp.where(y @ y < radius**2, y, jnp.nan)

    return sphere_mod.build(f"sphere, action defined in |x| < {radius}", action=capped)


def test_points_moved_out_of_the_chart_are_a_trust_note_not_a_failure(sphere_mod):
    # DEVELOPERS.md: non-finite values produced only after a sampled group element moves a point are reported
    # without failing the model; sampled rotations carry some points of the chart's disc beyond radius 1.5
    report = hamcheck.check(_sphere_chart_cap(sphere_mod, 1.5), points=32, only=["action"])
    (note,) = [d for d in report.diagnoses if d.kind == "non-finite"]
    assert 0 < len(note.data["points"]) < 32 and report.results["action"].status == "pass"
    assert report.passed and not report.findings, str(report)
    # negative control: an action undefined everywhere leaves no point to check, which fails the model
    report = hamcheck.check(_sphere_chart_cap(sphere_mod, 0.0), points=8, only=["action"])
    assert report.results["action"].status == "error" and not report.passed
