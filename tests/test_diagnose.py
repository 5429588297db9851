"""Each planted mistake is caught with the right finding, on bundled and on fresh models.

The sign/scale/offset/cocycle/right-action expectations are those of
finite.md ("How planted mistakes show on the sphere", checked numerically there).
"""

import jax.numpy as jnp
import numpy as np
import pytest

import hamcheck
from hamcheck import Convention

POINTS = 12


def kinds(report):
    return {f.kind for f in report.findings}


@pytest.mark.parametrize(
    "name, expected",
    [
        ("sign_flipped", {"moment-sign"}),
        ("doubled", {"moment-scale"}),
        ("shifted", {"moment-offset"}),
        ("right_action", {"right-action", "bracket-sign"}),
        ("bracket_flipped", {"bracket-sign"}),
        ("fields_mismatch", {"fields-mismatch"}),
        ("not_antisymmetric", {"not-antisymmetric"}),
        ("partly_undefined", {"non-finite"}),
        ("translations", {"central-cocycle"}),
        ("not_closed", {"not-closed"}),
        ("not_invariant", {"not-invariant"}),
        ("degenerate", {"degenerate"}),
        ("half_plane_mixed", {"moment-scale"}),
    ],
)
def test_bundled_broken_models(broken_mod, name, expected):
    report = hamcheck.check(getattr(broken_mod, name), points=POINTS)
    assert not report.passed
    assert expected <= kinds(report), str(report)
    for f in report.findings:
        assert "--seed 0" in f.replay and "planted_mistakes.py" in f.replay  # replayable


def test_scale_factors_are_reported(broken_mod):
    # mu doubled: least squares gives 1/2 for every generator (finite.md: "mu doubled ... 2")
    report = hamcheck.check(broken_mod.doubled, points=POINTS, only=["moment_map"])
    (finding,) = report.findings
    assert finding.data["factors"] == pytest.approx([0.5, 0.5, 0.5], rel=1e-9)
    mixed = hamcheck.check(broken_mod.half_plane_mixed, points=POINTS, only=["moment_map"])
    assert mixed.findings[0].data["factors"] == pytest.approx([1, -1, 1], rel=1e-9)


def test_offset_is_recovered_exactly(broken_mod):
    # constant shift c on the sphere: least squares recovers c exactly (finite.md)
    report = hamcheck.check(broken_mod.shifted, points=POINTS, only=["equivariance"])
    (finding,) = report.findings
    assert finding.data["offset"] == pytest.approx([0.3, 0.0, -0.2], abs=1e-12)


def test_heisenberg_cocycle_value(broken_mod):
    # translations of R^2 with mu = (y, -x): constant cocycle 1 on an abelian algebra (finite.md)
    report = hamcheck.check(broken_mod.translations, points=POINTS, only=["equivariance"])
    (finding,) = report.findings
    assert finding.kind == "central-cocycle"
    assert finding.data["cocycle"] == pytest.approx(np.array([[0, 1], [-1, 0]]), abs=1e-12)


# ---- fresh models that are not in the repository


def test_unitary_orbit_offset_found_on_cp2(cpn_mod):
    # CP^2 with U(3): shift mu by a constant that is not central; lambda recovered up to the centre
    base = cpn_mod.unitary(2)
    shift = np.linspace(0.1, 0.9, 9)
    shifted = hamcheck.Model(
        "CP2 shifted", 4, form=cpn_mod.fubini_study, algebra=base.algebra,
        moment=lambda x: base.moment(x) + jnp.asarray(shift), action=base.action, sample=base.sample,
    )
    report = hamcheck.check(shifted, points=POINTS, only=["moment_map", "equivariance"])
    assert report.results["moment_map"].status == "pass"
    (finding,) = report.findings
    assert finding.kind == "moment-offset"
    lam = finding.data["offset"]
    # subtracting lambda restores equivariance (the centre i*I of u(3) is left free)
    fixed = hamcheck.Model(
        "CP2 fixed", 4, form=cpn_mod.fubini_study, algebra=base.algebra,
        moment=lambda x: base.moment(x) + jnp.asarray(shift - lam), action=base.action, sample=base.sample,
    )
    assert hamcheck.check(fixed, points=POINTS, only=["equivariance"]).passed


def test_abelian_shift_is_harmless(oscillator_mod):
    # for a torus a constant shift of mu is another moment map: nothing to flag
    base = oscillator_mod.oscillator
    shifted = hamcheck.Model(
        "oscillator shifted", base.dim, form=base.form, algebra=base.algebra,
        moment=lambda x: base.moment(x) + 5.0, action=base.action,
    )
    report = hamcheck.check(shifted, points=POINTS)
    assert report.passed and not report.findings, str(report)


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


def test_flow_convention_with_negated_fields(sphere_mod, broken_mod):
    # vector fields of exp(-t xi) are right for flow=-1; then sign*flow must stay +1 for mu = p
    fields = lambda x: -broken_mod.sphere_fields(x)  # noqa: E731
    model = hamcheck.Model("sphere flow -1", 2, form=sphere_mod.area_form, algebra=sphere_mod.SO3,
                           moment=sphere_mod.to_sphere, vector_fields=fields, convention=Convention(sign=-1, flow=-1))
    assert hamcheck.check(model, points=POINTS).passed


def test_half_plane_sign_flip(half_plane_mod):
    m = half_plane_mod
    flipped = hamcheck.Model("H2 flipped", 2, form=m.form, algebra=m.SL2, moment=lambda x: -m.moment(x),
                             action=m.mobius, sample=m.sample)
    report = hamcheck.check(flipped, points=POINTS, only=["moment_map"])
    assert [f.kind for f in report.findings] == ["moment-sign"]
