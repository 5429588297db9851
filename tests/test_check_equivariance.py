"""hamcheck.checks.equivariance: omega(X_a, X_b) = sign*flow <mu, [e_a, e_b]>; offset and cocycle diagnoses.

Offsets and cocycles are those of docs/references.md ("How planted mistakes show on the sphere").
"""

import jax.numpy as jnp
import numpy as np
import pytest

import hamcheck
from check_support import DIAGNOSIS_POINTS as POINTS, assert_diagnosed, assert_negative_control


def test_negative_control(broken_mod):
    assert_negative_control(broken_mod, "equivariance", "shifted")


@pytest.mark.parametrize("name, expected", [("shifted", {"moment-offset"}), ("translations", {"central-cocycle"})])
def test_bundled_broken_models(broken_mod, name, expected):
    assert_diagnosed(broken_mod, name, expected)


def test_offset_is_recovered_exactly(broken_mod):
    # constant shift c on the sphere: least squares recovers c exactly (docs/references.md)
    report = hamcheck.check(broken_mod.shifted, points=POINTS, only=["equivariance"])
    (finding,) = report.findings
    assert finding.data["offset"] == pytest.approx([0.3, 0.0, -0.2], abs=1e-12)


def test_heisenberg_cocycle_value(broken_mod):
    # translations of R^2 with mu = (y, -x): constant cocycle 1 on an abelian algebra (docs/references.md)
    report = hamcheck.check(broken_mod.translations, points=POINTS, only=["equivariance"])
    (finding,) = report.findings
    assert finding.kind == "central-cocycle"
    assert finding.data["cocycle"] == pytest.approx(np.array([[0, 1], [-1, 0]]), abs=1e-12)


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
