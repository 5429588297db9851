"""hamcheck.checks.hamiltonian_flow: the check named ``flow``, Hamiltonian flow of <mu, xi> vs exp(flow t xi).x.

The plane's version of this negative control is in tests/test_flow.py; here the
sphere (SO(3) acting by rotations, mu = p; README's first model): negating the
moment map together with the vector fields keeps the moment equation but makes
the flow run backwards (common practice: X_{-H} = -X_H).
"""

import types

import numpy as np

import hamcheck
from hamcheck import Convention
from hamcheck.checks.hamiltonian_flow import CHECK, FLOW_ANGLE, FLOW_STEPS
from hamcheck.diagnose import Evidence


def test_name_stays_flow_and_statement_follows_the_convention():
    assert CHECK.name == "flow" and "flow" in hamcheck.CHECK_NAMES
    assert "is exp(t xi).x" in CHECK.state((1, 1)) and "is exp(-t xi).x" in CHECK.state((1, -1))
    assert "= -d_j <mu, xi>" in CHECK.state((-1, 1))


def test_rk4_truncation_sits_far_below_the_tolerance():
    # RK4's local error ~ h^5/120 (common practice) summed over the steps, against the default 1e-9
    h = FLOW_ANGLE / FLOW_STEPS
    assert FLOW_STEPS * h**5 / 120 < 1e-3 * CHECK.tolerance.default


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
    out = {"field": np.array([0.5]), "along": np.array([0.5]), "against": np.array([0.5]), "conserved": np.array([0.0])}
    d = CHECK.diagnose(Evidence(model, np.zeros((1, 2)), out, np.array([0.5]), 1e-9, None, True, 0))
    assert not d.findings and "fix the moment equation first" in d.note
