"""hamcheck.checks.run: the runner. Correct models pass; faults at points are reported; errors stay local."""

import jax
import jax.numpy as jnp
import numpy as np
import pytest

import hamcheck
from check_support import CONTROL_POINTS as POINTS, DIAGNOSIS_POINTS, assert_diagnosed
from hamcheck import Convention, LieAlgebra, Model


def test_correct_models_pass(sphere_mod, cpn_mod, half_plane_mod, cotangent_mod, oscillator_mod):
    for model in (sphere_mod.sphere, cpn_mod.cp2_torus, cpn_mod.cp2_unitary, half_plane_mod.half_plane,
                  cotangent_mod.cotangent_so3, oscillator_mod.oscillator):
        report = hamcheck.check(model, points=POINTS)
        assert report.passed, str(report)
        assert not report.findings
        for r in report.results.values():
            if r.status == "pass" and r.tolerance == 1e-12:
                # autodiff floors are ~1e-16 (docs/references.md, float64 numerics); the tolerance sits far above
                assert r.residual < 1e-13


def test_point_faults_are_reported_and_others_checked(broken_mod):
    report = hamcheck.check(broken_mod.partly_undefined, points=16)
    (fault,) = [f for f in report.findings if f.check == "moment"]
    assert fault.kind == "non-finite"
    n_bad = len(fault.data["points"])
    assert 0 < n_bad < 16
    assert report.results["moment_map"].points == 16 - n_bad
    assert report.results["moment_map"].status == "pass"
    assert not report.passed  # a user function failing inside its declared domain fails the model


def test_bundled_partly_undefined_model(broken_mod):
    assert_diagnosed(broken_mod, "partly_undefined", {"non-finite"})


def test_usage_errors():
    with pytest.raises(hamcheck.UsageError, match="unknown check"):
        hamcheck.check(_tiny(), only=["closedness"])
    with pytest.raises(hamcheck.UsageError, match="points"):
        hamcheck.check(_tiny(), points=0)


def test_error_in_one_check_does_not_hide_the_others():
    # a moment map computed outside jax (pure_callback, no derivative rule) evaluates and traces,
    # but cannot be differentiated: moment_map errors with its reason, the other checks still run
    U1 = LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])])

    def opaque_moment(x):
        spec = jax.ShapeDtypeStruct((1,), jnp.float64)
        return jax.pure_callback(lambda y: np.array([-(y @ y) / 2]), spec, x, vmap_method="sequential")

    m = Model("opaque moment", 2, form=lambda x: jnp.array([[0.0, 1], [-1, 0]]), algebra=U1,
              moment=opaque_moment, action=lambda g, x: g @ x)
    report = hamcheck.check(m, points=4)
    assert report.results["moment_map"].status == "error"
    assert "could not run" in report.results["moment_map"].message
    assert report.results["equivariance"].status == "pass"
    assert report.results["closed"].status == "pass"
    assert not report.passed


def test_flow_convention_with_negated_fields(sphere_mod, broken_mod):
    # vector fields of exp(-t xi) are right for flow=-1; then sign*flow must stay +1 for mu = p
    fields = lambda x: -broken_mod.sphere_fields(x)  # noqa: E731
    model = hamcheck.Model("sphere flow -1", 2, form=sphere_mod.area_form, algebra=sphere_mod.SO3,
                           moment=sphere_mod.to_sphere, vector_fields=fields, convention=Convention(sign=-1, flow=-1))
    assert hamcheck.check(model, points=DIAGNOSIS_POINTS).passed


def test_selecting_checks_does_not_change_what_the_others_see(broken_mod):
    # probes are seeded per check by (seed, crc32(name)): --only must replay the same group elements, so the
    # O(1) composition defect of a right action comes out the same (to round-off) with and without other checks
    model = broken_mod.right_action
    full = hamcheck.check(model, points=4, seed=5, only=["group_equivariance", "action", "invariant"])
    alone = hamcheck.check(model, points=4, seed=5, only=["action"])
    assert alone.results["action"].residual > 0.01
    assert alone.results["action"].residual == pytest.approx(full.results["action"].residual, rel=1e-12)
    assert alone.results["action"].replay.endswith("--seed 5 --points 4 --only action")


def test_results_carry_direction_and_statement_from_the_check():
    report = hamcheck.check(_tiny(), points=4, only=["nondegenerate", "moment_map"])
    assert report.results["nondegenerate"].compare == "above" and report.results["moment_map"].compare == "below"
    assert "with sign = +1" in report.results["moment_map"].statement


def _tiny():
    U1 = LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])])
    return Model("tiny", 2, form=lambda x: jnp.array([[0.0, 1], [-1, 0]]), algebra=U1,
                 moment=lambda x: jnp.array([-(x @ x) / 2]), action=lambda g, x: g @ x)
