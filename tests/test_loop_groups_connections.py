"""Tests of hamcheck.loop_groups.connections: the level-c gauge action and checks of a user's finite action.

References: docs/references.md, Loop groups (pairing identity, left action, winding loops);
Pressley–Segal, *Loop Groups*, ch. 4 (from memory).
"""

from __future__ import annotations

import numpy as np
import pytest

import hamcheck
from hamcheck import loop_groups as af
from hamcheck.loop_groups.connections import _random_connection, _random_loop
from helpers import rel

GROUPS = [af.SU2, af.SO3, af.U1, af.SU(3)]


def std_action(c):
    return lambda g, A: af.gauge_action(g, A, c)


@pytest.mark.parametrize("group", GROUPS, ids=lambda g: g.name)
def test_standard_gauge_action_passes_every_named_check(group):
    # references.md, Loop groups: a left action; pairing identity; Hol(g.A) = g(0) Hol(A) g(0)^-1
    out = af.check_gauge_action(std_action(0.8), 0.8, group)
    assert out.passed, str(out)


def test_flipped_sign_of_c_g_prime_is_caught_by_pairing_and_holonomy_checks():
    # negative control (references.md, Loop groups): g A g^-1 - c g' g^-1 composes (it is the level -c
    # orbit) but breaks the level-c pairing identity and the holonomy covariance
    G, c = af.SU2, 0.8
    flipped = lambda g, A: G.coordinates(G.conj(g.values, G.element(A))) - c * g.right_maurer_cartan()  # noqa: E731
    out = af.check_gauge_action(flipped, c)
    assert out.results["composition"].status == "pass"
    assert out.results["pairing_identity"].status == "fail" and out.results["pairing_identity"].residual > 0.1
    assert out.results["holonomy_covariance"].status == "fail" and out.results["holonomy_covariance"].residual > 0.1


def test_right_action_is_caught_by_the_composition_check():
    # negative control (references.md, Loop groups): g^-1 A g + c g^-1 g' is a right action
    G, c = af.SU2, 0.8

    def right(g, A):
        gi = np.conj(np.swapaxes(g.values, -1, -2))
        return G.coordinates(gi @ G.element(A) @ g.values) + c * g.left_maurer_cartan()

    out = af.check_gauge_action(right, c)
    assert out.results["composition"].status == "fail" and out.results["composition"].residual > 0.1


def test_wrong_level_in_the_action_is_caught_by_the_pairing_identity():
    # negative control: c/2 in front of g' g^-1
    G, c = af.SU2, 0.8
    half = lambda g, A: G.coordinates(G.conj(g.values, G.element(A))) + 0.5 * c * g.right_maurer_cartan()  # noqa: E731
    out = af.check_gauge_action(half, c)
    assert out.results["pairing_identity"].status == "fail" and out.results["pairing_identity"].residual > 0.05


def test_infinitesimal_pairing_identity_spectral():
    # references.md, Loop groups: int <delta_xi A, eta> = -(int <A, [xi, eta]> + c int <xi, eta'>)
    rng = np.random.default_rng(5)
    M, c = 48, 1.7
    A = _random_connection(af.SU2, rng, M)
    xi = _random_connection(af.SU2, rng, M, modes=4)
    eta = _random_connection(af.SU2, rng, M, modes=4)
    lhs = af.pairing(af.infinitesimal_action(xi, A, c), eta)
    rhs = -(af.pairing(A, af.SU2.bracket(xi, eta)) + af.central_cocycle(xi, eta, c))
    assert lhs == pytest.approx(rhs, rel=1e-13, abs=1e-13)
    # the cocycle is antisymmetric (integration by parts)
    assert af.central_cocycle(xi, eta, c) == pytest.approx(-af.central_cocycle(eta, xi, c), rel=1e-13, abs=1e-13)


def test_extension_adjoint_preserves_the_pairing():
    # references.md, Loop groups / Pressley-Segal: <(g.A, c), Ad_g(eta, b)> = <(A, c), (eta, b)>
    rng = np.random.default_rng(6)
    M, c, b = 64, 1.3, 0.4
    A = _random_connection(af.SU2, rng, M)
    eta = _random_connection(af.SU2, rng, M)
    g = _random_loop(af.SU2, rng, M)
    eta2, b2 = af.extension_adjoint(g, eta, b)
    lhs = af.pairing(af.gauge_action(g, A, c), eta2) + c * b2
    rhs = af.pairing(A, eta) + c * b
    assert lhs == pytest.approx(rhs, rel=1e-13)


def test_even_winding_loop_shifts_a_by_2c_and_keeps_the_holonomy():
    # references.md, Loop groups: exp(k theta e_3) shifts a by k c; a loop in SU(2) only for even k
    M, c, a = 32, 0.7, 0.25
    g = af.Loop.winding(af.SU2, 2, M)
    A2 = af.gauge_action(g, af.constant_connection(a, M), c)
    assert np.allclose(A2[:, 2], a + 2 * c, rtol=0, atol=1e-14)
    H1 = af.holonomy(af.constant_connection(a, M), c).matrix
    H2 = af.holonomy(A2, c).matrix
    assert rel(H1, H2) <= 1e-12
    # k = 1 is not a closed loop in SU(2): g(2 pi) = -I
    assert np.allclose(af.SU2.exp(2 * np.pi * af.SU2.basis[2]), -np.eye(2), atol=1e-15)


@pytest.mark.parametrize("factor", [-1.0, 0.5, 2 * np.pi])
def test_a_wrong_level_in_the_finite_action_is_a_central_cocycle_finding(factor):
    # planted mistake: factor * c g' g^-1; the pairing identity then holds for the cocycle times factor
    G, c = af.SU2, 0.8
    wrong = lambda g, A: G.coordinates(G.conj(g.values, G.element(A))) + factor * c * g.right_maurer_cartan()  # noqa: E731
    out = af.check_gauge_action(wrong, c)
    finding = next(f for f in out.findings if f.kind == "central-cocycle")
    assert finding.data["ratio"] == pytest.approx(factor, rel=1e-7) and finding.check == "pairing_identity"
    assert "pairing_identity (failed)" in out.explain()
    # negative control: the standard action passes and has no such finding
    assert "central-cocycle" not in [f.kind for f in af.check_gauge_action(std_action(c), c).findings]
