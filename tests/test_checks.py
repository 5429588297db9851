"""Each check passes a correct model and fails a planted mistake (negative controls)."""

import jax
import jax.numpy as jnp
import numpy as np
import pytest
import sympy as sp

import hamcheck
from hamcheck import LieAlgebra, Model, Settings
from hamcheck.checks import CHECK_NAMES, exterior_derivative

POINTS = 8


def test_check_names_are_the_documented_ones():
    assert CHECK_NAMES == (
        "antisymmetric", "closed", "nondegenerate", "action", "invariant", "moment_map", "equivariance",
        "group_equivariance", "flow",
    )


@pytest.mark.parametrize(
    "check, broken",
    [
        ("antisymmetric", "not_antisymmetric"),
        ("closed", "not_closed"),
        ("nondegenerate", "degenerate"),
        ("action", "right_action"),
        ("invariant", "not_invariant"),
        ("moment_map", "sign_flipped"),
        ("equivariance", "shifted"),
        ("group_equivariance", "shifted"),
    ],
)
def test_negative_control(broken_mod, check, broken):
    report = hamcheck.check(getattr(broken_mod, broken), points=POINTS, only=[check])
    assert report.results[check].status == "fail", str(report)
    assert report.results[check].worst_point is not None


def test_correct_models_pass(sphere_mod, cpn_mod, half_plane_mod, cotangent_mod, oscillator_mod):
    for model in (sphere_mod.sphere, cpn_mod.cp2_torus, cpn_mod.cp2_unitary, half_plane_mod.half_plane,
                  cotangent_mod.cotangent_so3, oscillator_mod.oscillator):
        report = hamcheck.check(model, points=POINTS)
        assert report.passed, str(report)
        assert not report.findings
        for r in report.results.values():
            if r.status == "pass" and r.tolerance == 1e-12:
                # autodiff floors are ~1e-16 (numerics.md); the tolerance sits far above
                assert r.residual < 1e-13


def test_randomized_closedness_pairs(broken_mod, cpn_mod):
    pairs = Settings(full_tensor_max_dim=1)  # force the random-pair path on small models
    assert hamcheck.check(cpn_mod.cp2_torus, points=POINTS, only=["closed"], settings=pairs).passed
    report = hamcheck.check(broken_mod.not_closed, points=POINTS, only=["closed"], settings=pairs)
    assert report.results["closed"].status == "fail"


def test_exterior_derivative_matches_sympy():
    # sympy as an independent oracle for d omega of a non-closed polynomial 2-form on R^4
    xs = sp.symbols("x0:4")
    coeff = {(0, 1): 1 + xs[3] ** 2, (0, 2): xs[1] * xs[3], (1, 3): 2 + xs[0], (2, 3): 1 + xs[0] * xs[1]}
    W = sp.zeros(4, 4)
    for (i, j), f in coeff.items():
        W[i, j], W[j, i] = f, -f
    dW = [[[sp.diff(W[j, k], xs[i]) + sp.diff(W[k, i], xs[j]) + sp.diff(W[i, j], xs[k]) for k in range(4)]
           for j in range(4)] for i in range(4)]
    point = {s: v for s, v in zip(xs, [0.3, -1.2, 0.7, 0.5])}
    expected = np.array([[[float(e.subs(point)) for e in row] for row in plane] for plane in dW])
    form_np = sp.lambdify([xs], W, "jax")
    model = Model("sympy form", 4, form=lambda x: jnp.asarray(form_np(list(x)), dtype=float),
                  algebra=LieAlgebra.from_structure_constants(np.zeros((1, 1, 1))),
                  moment=lambda x: jnp.zeros(1), vector_fields=lambda x: jnp.zeros((1, 4)))
    got, _ = exterior_derivative(model, jnp.array([0.3, -1.2, 0.7, 0.5]))
    assert np.asarray(got) == pytest.approx(expected, abs=1e-14)
    assert np.abs(expected).max() > 0.5  # the oracle itself sees a non-closed form


def test_point_faults_are_reported_and_others_checked(broken_mod):
    report = hamcheck.check(broken_mod.partly_undefined, points=16)
    (fault,) = [f for f in report.findings if f.check == "moment"]
    assert fault.kind == "non-finite"
    n_bad = len(fault.data["points"])
    assert 0 < n_bad < 16
    assert report.results["moment_map"].points == 16 - n_bad
    assert report.results["moment_map"].status == "pass"
    assert not report.passed  # a user function failing inside its declared domain fails the model


def test_skip_is_explained_not_silent():
    U1 = LieAlgebra.from_structure_constants(np.zeros((1, 1, 1)), names=["rot"])
    m = Model("fields only", 2, form=lambda x: jnp.array([[0.0, 1], [-1, 0]]), algebra=U1,
              moment=lambda x: jnp.array([-(x @ x) / 2]), vector_fields=lambda x: jnp.array([[-x[1], x[0]]]))
    report = hamcheck.check(m, points=POINTS)
    r = report.results["group_equivariance"]
    assert r.status == "skip" and "action" in r.message
    assert report.passed


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


def _tiny():
    U1 = LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])])
    return Model("tiny", 2, form=lambda x: jnp.array([[0.0, 1], [-1, 0]]), algebra=U1,
                 moment=lambda x: jnp.array([-(x @ x) / 2]), action=lambda g, x: g @ x)
