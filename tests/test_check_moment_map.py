"""hamcheck.checks.moment_map: iota_{X_a} omega = sign d mu_a; sign and scale diagnoses.

Expected factors are those of docs/references.md ("How planted mistakes show on the sphere").
"""

import pytest

import hamcheck
from check_support import DIAGNOSIS_POINTS as POINTS, assert_diagnosed, assert_negative_control
from hamcheck import Convention
from hamcheck.checks.moment_map import CHECK


def test_negative_control(broken_mod):
    assert_negative_control(broken_mod, "moment_map", "sign_flipped")


@pytest.mark.parametrize(
    "name, expected",
    [("sign_flipped", {"moment-sign"}), ("doubled", {"moment-scale"}), ("half_plane_mixed", {"moment-scale"})],
)
def test_bundled_broken_models(broken_mod, name, expected):
    assert_diagnosed(broken_mod, name, expected)


def test_scale_factors_are_reported(broken_mod):
    # mu doubled: least squares gives 1/2 for every generator (docs/references.md: "mu doubled ... 2")
    report = hamcheck.check(broken_mod.doubled, points=POINTS, only=["moment_map"])
    (finding,) = report.findings
    assert finding.data["factors"] == pytest.approx([0.5, 0.5, 0.5], rel=1e-9)
    mixed = hamcheck.check(broken_mod.half_plane_mixed, points=POINTS, only=["moment_map"])
    assert mixed.findings[0].data["factors"] == pytest.approx([1, -1, 1], rel=1e-9)


def test_cotangent_factor_and_convention(cotangent_mod):
    base = cotangent_mod.cotangent_so3
    half = hamcheck.Model("T*R3 half", 6, form=base.form, algebra=base.algebra, moment=lambda x: base.moment(x) / 2,
                          action=base.action)
    (f,) = hamcheck.check(half, points=POINTS, only=["moment_map"]).findings
    assert f.kind == "moment-scale" and f.data["factors"] == pytest.approx([2, 2, 2], rel=1e-9)
    # the opposite sign is a valid model once declared in the other convention
    neg = hamcheck.Model("T*R3 negated", 6, form=base.form, algebra=base.algebra, moment=lambda x: -base.moment(x),
                         action=base.action, convention=Convention(sign=-1))
    assert hamcheck.check(neg, points=POINTS).passed


def test_half_plane_sign_flip(half_plane_mod):
    m = half_plane_mod
    flipped = hamcheck.Model("H2 flipped", 2, form=m.form, algebra=m.SL2, moment=lambda x: -m.moment(x),
                             action=m.mobius, sample=m.sample)
    report = hamcheck.check(flipped, points=POINTS, only=["moment_map"])
    assert [f.kind for f in report.findings] == ["moment-sign"]


def test_statement_carries_the_sign_into_results(broken_mod):
    # the statement a result carries is the check's one template with the model's sign substituted
    assert "with sign = -1: X_a^i omega_ij = -d_j mu_a" in CHECK.state(Convention(sign=-1))
    report = hamcheck.check(broken_mod.sign_flipped, points=POINTS, only=["moment_map"])
    assert report.results["moment_map"].statement == CHECK.state(broken_mod.sign_flipped.convention)
