"""hamcheck.checks.hamiltonian_flow: the check named ``flow``, Hamiltonian flow of <mu, xi> vs exp(flow t xi).x.

The plane's version of this negative control is in tests/test_flow.py; here the
sphere (SO(3) acting by rotations, mu = p; README's first model): negating the
moment map together with the vector fields keeps the moment equation but makes
the flow run backwards (common practice: X_{-H} = -X_H).
"""

import types

import numpy as np
import pytest
import scipy.linalg

import hamcheck
from hamcheck import Convention, LieAlgebra, Model, virasoro
from hamcheck._jax import jax, jnp
from hamcheck.checks.hamiltonian_flow import (
    CHECK, FLOW_ERROR_TARGET, FLOW_MAX_STEPS, FLOW_TRUST_FACTOR, ORDER, TABLEAU_A, TABLEAU_B, integrate,
)
from hamcheck.diagnose import Evidence


def test_name_stays_flow_and_statement_follows_the_convention():
    assert CHECK.name == "flow" and "flow" in hamcheck.CHECK_NAMES
    assert "is exp(t xi).x" in CHECK.state((1, 1)) and "is exp(-t xi).x" in CHECK.state((1, -1))
    assert "= -d_j <mu, xi>" in CHECK.state((-1, 1))


def test_tableau_is_scipys_dop853_digit_for_digit():
    # reference: scipy.integrate.DOP853 (Hairer, Norsett, Wanner 1993, sec. II.10); the copy in
    # hamcheck/checks/_dop853.py saves importing scipy.integrate at start-up
    from scipy.integrate import DOP853

    s = DOP853.n_stages
    assert ORDER == DOP853.order == 8
    assert np.array_equal(TABLEAU_A, DOP853.A[:s, :s]) and np.array_equal(TABLEAU_B, DOP853.B[:s])
    # consistency of any Runge-Kutta method (common practice): weights sum to 1, order conditions
    assert abs(TABLEAU_B.sum() - 1) < 1e-14
    c = TABLEAU_A.sum(axis=1)
    for q in range(1, ORDER + 1):  # bushy-tree conditions sum_i b_i c_i^(q-1) = 1/q
        assert abs(TABLEAU_B @ c ** (q - 1) - 1 / q) < 1e-13


def test_error_target_sits_100x_below_the_tolerance():
    assert FLOW_ERROR_TARGET * 100 <= CHECK.tolerance.default


def _rotation_estimate(rate, t):
    """The flow integrator (order 8, step doubling) on y' = rate J y against the exact rotation (scipy.linalg.expm)."""
    A = rate * np.array([[0.0, -1.0], [1.0, 0.0]])
    x = np.array([0.6, -0.8])

    def estimate(y, coarse):
        return jnp.max(jnp.abs(y - coarse)) / jnp.maximum(jnp.max(jnp.abs(x)), jnp.max(jnp.abs(y)))

    y, coarse, steps = jax.jit(lambda x0: integrate(lambda z: jnp.asarray(A) @ z, x0, t, estimate))(jnp.asarray(x))
    exact = scipy.linalg.expm(t * A) @ x
    return float(estimate(y, coarse)), float(np.max(np.abs(np.asarray(y) - exact))), int(steps)


def test_step_doubling_estimate_bounds_the_true_error():
    # the exact flow of a linear field is the matrix exponential (from memory); an order-8 method's error
    # falls 256x per doubling (common practice), so the difference of two solutions bounds it
    for rate in (1.0, 8.0, 20.0):
        est, true, steps = _rotation_estimate(rate, 0.05)
        assert est <= FLOW_ERROR_TARGET and true <= est, (rate, est, true, steps)
    # a fast rotation needs more steps than a slow one: the step count follows the field
    assert _rotation_estimate(20.0, 0.05)[2] > _rotation_estimate(1.0, 0.05)[2]


def test_a_stiff_flow_stops_at_the_step_limit_with_an_honest_estimate():
    est, true, steps = _rotation_estimate(400.0, 0.05)  # 20 radians over the arc
    assert steps == FLOW_MAX_STEPS and est > FLOW_ERROR_TARGET and true <= est


def _fast_plane(k, backwards=False):
    """The plane, mu = -k |x|^2 / 2: its flow turns k times faster than exp(t xi) (action g^k)."""
    u1 = LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])], names=["rot"])
    W = jnp.array([[0.0, 1.0], [-1.0, 0.0]])
    s = -1.0 if backwards else 1.0
    # planted when backwards: moment and fields negated together, so only the flow sees it
    return Model(f"plane turning {k}x" + (" backwards" if backwards else ""), 2, form=lambda x: W, algebra=u1,
                 moment=lambda x: s * k * jnp.array([-(x[0] ** 2 + x[1] ** 2) / 2]),
                 vector_fields=lambda x: s * k * jnp.array([[-x[1], x[0]]]),
                 action=lambda g, x: jnp.linalg.matrix_power(g, k) @ x)


def test_a_correct_stiff_model_gets_a_diagnosis_not_a_failure():
    report = hamcheck.check(_fast_plane(400), points=4, only=["flow"])
    assert report.results["flow"].status == "pass" and report.passed, str(report)
    assert [d.kind for d in report.diagnoses] == ["flow-unresolved"]
    assert "stiff or badly scaled" in report.diagnoses[0].message


def test_a_backwards_stiff_flow_is_still_found():
    # the defect (~1, the flow turned the other way by 20 rad) is far beyond the unresolved error (~1e-8)
    report = hamcheck.check(_fast_plane(400, backwards=True), points=4, only=["flow"])
    assert report.results["flow"].status == "fail"
    assert [f.kind for f in report.findings] == ["flow-sign"]


def test_virasoro_chart_high_modes_no_false_alarm():
    # issue case: the fixed 8-step integrator failed this correct chart at 2.1e-8 (its own truncation)
    model = virasoro.orbit_model(0.25, 1.0, modes=range(2, 9))
    report = hamcheck.check(model, points=8, seed=3, only=["flow"])
    result = report.results["flow"]
    assert result.status == "pass" and result.residual < CHECK.tolerance.default / FLOW_TRUST_FACTOR, str(report)
    assert not report.diagnoses


def test_sphere_passes_and_a_backwards_flow_is_found(sphere_mod, broken_mod):
    good = hamcheck.check(sphere_mod.sphere, points=4, only=["flow"])
    assert good.results["flow"].status == "pass", str(good)
    backwards = sphere_mod.build("sphere: flow backwards", moment=lambda x: -sphere_mod.to_sphere(x),
                                 vector_fields=lambda x: -broken_mod.sphere_fields(x))
    bad = hamcheck.check(backwards, points=4, only=["flow", "moment_map"])
    assert bad.results["moment_map"].status == "pass"
    assert bad.results["flow"].status == "fail"
    assert [f.kind for f in bad.findings] == ["flow-sign"]


def test_skipped_with_finite_differences():
    model = types.SimpleNamespace(has_action=True, traced=False)
    assert "finite differences" in CHECK.applies(model, None)


def test_diagnosis_of_a_field_mismatch_defers_to_the_moment_equation():
    model = types.SimpleNamespace(convention=Convention())
    out = {"field": np.array([0.5]), "along": np.array([0.5]), "against": np.array([0.5]), "conserved": np.array([0.0]),
           "error": np.array([1e-13]), "conserved_error": np.array([1e-13]), "steps": np.array([16])}
    d = CHECK.diagnose(Evidence(model, np.zeros((1, 2)), out, np.array([0.5]), 1e-9, None, True, 0))
    assert not d.findings and "fix the moment equation first" in d.note
