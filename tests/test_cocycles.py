"""Tests of hamcheck.circle.cocycles: a user's own truncated coadjoint action and its central term.

References: docs/references.md, Virasoro (key identity <delta_X T, Y> = <T, [X, Y]> + c GF(X, Y),
GF not a coboundary; from memory) and docs/references.md, Loop groups (level-c action
delta_xi A = [xi, A] + c xi'). The result is a hamcheck.Report.
"""

import dataclasses
import re
import functools
import json

import numpy as np
import pytest

import hamcheck
from hamcheck import circle, virasoro
from hamcheck.circle import cocycles
from hamcheck.testing import failure_message

K = 8
C = 2.0


@functools.cache
def vir():
    return virasoro.truncated_algebra(K, C)


def kinds(rep):
    return tuple(f.kind for f in rep.findings)


def run(bracket=None, pairing=None, action=None, **kw):
    alg = vir()
    return cocycles.check_coadjoint_action(
        bracket or alg.bracket, pairing or alg.pairing, action or alg.action, alg.modes, reference=alg.reference, **kw
    )


def test_standard_virasoro_passes_with_ratio_one():
    # references.md, Virasoro: <delta_X T, Y> = <T, [X, Y]> + c GF(X, Y), GF not a coboundary
    rep = run()
    assert rep.passed
    assert not cocycles.is_coboundary(rep)
    assert cocycles.central_ratio(rep) == pytest.approx(1.0, abs=1e-10)
    assert kinds(rep) == ("central-cocycle",)
    for name in ("action", "antisymmetric", "central_constant", "cocycle_identity"):
        assert rep.results[name].residual < 1e-12
    assert "m + n <= 8" in rep.diagnoses[0].message
    # one naming style for check names across families (finding kinds use hyphens, check names not)
    assert all(re.fullmatch(r"[a-z][a-z0-9_]*", name) for name in rep.results), list(rep.results)


def test_c_over_12_normalisation_is_a_central_ratio_finding():
    # planted mistake: c/12 X''' where c/2 X''' is meant -> ratio 1/6 (references.md, Virasoro conventions)
    bad = dataclasses.replace(vir(), central=1.0 / 12.0)
    rep = run(action=bad.action)
    assert not rep.passed
    assert rep.results["central_ratio"].status == "fail"
    assert cocycles.central_ratio(rep) == pytest.approx(1.0 / 6.0, rel=1e-10)
    assert "1/6" in next(f for f in rep.findings if f.kind == "central-cocycle").message


def test_opposite_bracket_sign_is_caught_by_the_action_check():
    # planted mistake: the usual vector-field bracket XY' - X'Y with the sign of X'Y - XY' declared
    rep = run(bracket=lambda X, Y: -vir().bracket(X, Y))
    assert rep.results["action"].status == "fail"
    assert "bracket-sign" in kinds(rep)
    # declaring the matching sign makes it an action again (references.md, Virasoro: delta_X is an anti-homomorphism then)
    rep2 = run(bracket=lambda X, Y: -vir().bracket(X, Y), sign=-1)
    assert rep2.results["action"].status == "pass"


def test_wrong_weight_breaks_antisymmetry():
    # planted mistake: X T' + X' T (weight 1 instead of the quadratic differential's 2 X' T)
    alg = vir()

    def action(X, T):
        Xg, Tg = alg._g(X), alg._g(T)
        return alg._v(Xg * circle.derivative(Tg) + circle.derivative(Xg) * Tg + 0.5 * C * circle.derivative(Xg, 3))

    rep = run(action=action)
    assert rep.results["antisymmetric"].status == "fail"
    assert "not-antisymmetric" in kinds(rep)


def test_coboundary_is_recognised():
    # delta'_X T = L_X (T + T1) with c = 0: the central term is <T1, [X, Y]>, a coboundary (from memory)
    alg = vir()
    T1 = np.zeros(2 * K + 1)
    T1[0], T1[3] = 0.7, -0.2
    lin = dataclasses.replace(alg, central=0.0)

    def action(X, T):
        return lin.action(X, np.asarray(T) + T1)

    rep = run(action=action)
    assert cocycles.is_coboundary(rep)
    assert rep.results["central_ratio"].status == "skip"
    assert "central-cocycle" not in kinds(rep)
    assert rep.passed


def test_non_cocycle_central_term_fails_the_identity():
    # planted mistake: an antisymmetric but arbitrary central part; not a 2-cocycle
    alg = vir()
    rng = np.random.default_rng(3)
    A = rng.standard_normal((2 * K + 1, 2 * K + 1))
    A = A - A.T
    weights = np.diag([2 * np.pi] + [np.pi] * (2 * K))  # the pairing's Gram matrix on real modes

    def action(X, T):
        return alg.action(X, T) + np.linalg.solve(weights, A.T @ np.asarray(X))

    rep = run(action=action)
    assert rep.results["cocycle_identity"].status == "fail"
    assert not rep.passed


def test_abelian_loop_algebra_with_left_sign_and_a_2pi_slip():
    # references.md, Loop groups for U(1): delta_xi A = c xi', KKS central term c int xi eta' (left action: sign -1)
    Kl, c = 6, 1.5
    M = 4 * Kl + 4
    g = lambda v: np.asarray(circle.mode_vector_to_samples(np.asarray(v, float), M))  # noqa: E731
    v = lambda f: circle.samples_to_mode_vector(f, Kl)  # noqa: E731
    modes = circle.vector_modes(Kl)
    bracket = lambda X, Y: np.zeros(2 * Kl + 1)  # noqa: E731
    pairing = lambda T, X: float(circle.integrate(g(T) * g(X)))  # noqa: E731
    ref = lambda X, Y: c * float(circle.integrate(g(X) * circle.derivative(g(Y))))  # noqa: E731
    good = cocycles.check_coadjoint_action(
        bracket, pairing, lambda X, T: v(c * circle.derivative(g(X))), modes, reference=ref, sign=-1
    )
    assert good.passed and cocycles.central_ratio(good) == pytest.approx(1.0, abs=1e-10)
    slip = cocycles.check_coadjoint_action(
        bracket, pairing, lambda X, T: v(2 * np.pi * c * circle.derivative(g(X))), modes, reference=ref, sign=-1
    )
    assert slip.results["central_ratio"].status == "fail"
    assert cocycles.central_ratio(slip) == pytest.approx(2 * np.pi, rel=1e-10)


def test_bad_inputs_give_one_clear_message():
    alg = vir()
    with pytest.raises(hamcheck.UsageError, match="bracket\\(X, Y\\) returned shape"):
        cocycles.check_coadjoint_action(lambda X, Y: np.zeros(3), alg.pairing, alg.action, alg.modes, reference=alg.reference)
    with pytest.raises(hamcheck.UsageError, match="action\\(X, T\\) raised ZeroDivisionError"):
        cocycles.check_coadjoint_action(alg.bracket, alg.pairing, lambda X, T: 1 / 0, alg.modes, reference=alg.reference)
    with pytest.raises(hamcheck.UsageError, match="sign must be"):
        run(sign=2)
    with pytest.raises(hamcheck.UsageError, match="at least 3"):
        cocycles.check_coadjoint_action(alg.bracket, alg.pairing, alg.action, [0, 1, 1, 2, 2], reference=alg.reference)


def test_report_renders():
    rep = run()
    text = str(rep)
    assert "de-aliased band" in text and "PASSED" in text
    d = rep.to_dict()
    assert d["passed"] is True and d["results"]["action"]["status"] == "pass"


def test_the_result_is_a_report_with_explain_json_and_the_plugin_message():
    rep = run()
    assert isinstance(rep, hamcheck.Report)
    # JSON round trip keeps the results, the central-cocycle finding and its ratio
    back = hamcheck.Report.from_dict(json.loads(rep.to_json()))
    assert back.passed and cocycles.central_ratio(back) == pytest.approx(1.0, abs=1e-10)
    assert back.results["coboundary"].statement == rep.results["coboundary"].statement != ""
    # a planted c/12 slip: explain() states the failing condition in words, with the replay
    bad = run(action=dataclasses.replace(vir(), central=1.0 / 12.0).action, seed=3)
    text = " ".join(bad.explain().split())
    assert "central_ratio (failed)" in text and "C = 1 x reference modulo coboundaries" in text
    assert "seed=3" in text and "Likely cause [central-cocycle]" in text
    # what assert_hamiltonian would print for it: the table, the findings and the explanation
    message = failure_message(bad)
    assert "FAILED: central_ratio" in message and "Why" in message


def test_former_module_name_still_imports():
    import hamcheck.cocycles as former

    assert former.check_coadjoint_action is cocycles.check_coadjoint_action
    assert former.COCYCLE_TOLERANCES["ratio"] == circle.TOLERANCES.cocycle_ratio
