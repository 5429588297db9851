"""Tests of hamcheck.virasoro.diffeomorphisms: Schwarzian, Phi_F, delta, bracket, Gelfand–Fuchs.

References: docs/references.md, Virasoro (conventions and identities; from memory), sympy as an oracle.
"""

import jax.numpy as jnp
import numpy as np
import pytest
import sympy

from hamcheck import circle, virasoro
from helpers import potential


def test_schwarzian_matches_sympy():
    # sympy oracle for S(F) = F'''/F' - (3/2)(F''/F')^2 (references.md, Virasoro)
    t = sympy.symbols("t")
    F = t + sympy.Rational(3, 10) * sympy.sin(t) + sympy.Rational(1, 10) * sympy.cos(2 * t)
    S = sympy.diff(F, t, 3) / sympy.diff(F, t) - sympy.Rational(3, 2) * (sympy.diff(F, t, 2) / sympy.diff(F, t)) ** 2
    S_num = sympy.lambdify(t, S, "numpy")
    G = virasoro.Diffeo.from_real_modes([1, 2], a=[0.0, 0.1], b=[0.3, 0.0])
    assert virasoro.schwarzian(G, 64) == pytest.approx(S_num(circle.grid(64)), abs=1e-13)


def test_schwarzian_is_mobius_invariant():
    # S(g o f) = S(f) for Moebius g (from memory; classical)
    f = lambda t: jnp.exp(0.3 * t + 0.2 * jnp.sin(t))  # noqa: E731  (positive: no poles below)
    gf = lambda t: (2 * f(t) + 1) / (f(t) + 3)  # noqa: E731
    a = virasoro.potential_from_developing_map(f, 1.0, 32)
    b = virasoro.potential_from_developing_map(gf, 1.0, 32)
    assert b == pytest.approx(a, abs=1e-12)
    # negative control: a non-Moebius change (squaring) changes S
    sq = virasoro.potential_from_developing_map(lambda t: f(t) ** 2 + f(t), 1.0, 32)
    assert np.abs(sq - a).max() > 1e-2


def test_right_action_law():
    # references.md, Virasoro: Phi_G(Phi_F T) = Phi_{F o G} T (a right action)
    c = 1.3
    T = potential()
    F = virasoro.Diffeo.from_real_modes([1, 2], [0.2, 0.0], [0.0, 0.1])
    G = virasoro.Diffeo.from_real_modes([1], [0.0], [0.25])
    M = 128
    inner = circle.Periodic.from_samples(virasoro.transform(T, c, F, M=M))
    lhs = virasoro.transform(inner, c, G, M=M)

    # derivatives of F o G by the chain rule (Faa di Bruno), exact for these trigonometric polynomials
    th = circle.grid(M)
    Gv, G1, G2, G3 = G(th), G(th, 1), G(th, 2), G(th, 3)
    F1, F2, F3 = F(Gv, 1), F(Gv, 2), F(Gv, 3)
    d1 = F1 * G1
    d2 = F2 * G1**2 + F1 * G2
    d3 = F3 * G1**3 + 3 * F2 * G1 * G2 + F1 * G3
    rhs = T(F(Gv)) * d1**2 + 0.5 * c * virasoro.schwarzian_from_derivatives(d1, d2, d3)
    assert lhs == pytest.approx(rhs, abs=1e-11)
    # negative control: the other order F o G -> G o F is not the law
    wrong = virasoro.transform(circle.Periodic.from_samples(virasoro.transform(T, c, G, M=M)), c, F, M=M)
    assert np.abs(wrong - rhs).max() > 1e-3


def test_delta_is_the_derivative_of_phi():
    # references.md, Virasoro: delta_X T = d/dt Phi_{theta + tX} T at t = 0; central differences, error ~h^2 ~ 1e-10
    c, M, h = 0.8, 64, 1e-5
    T = potential()
    X = virasoro.Diffeo.from_real_modes([1, 3], [0.3, 0.0], [0.0, -0.2]).displacement
    plus = virasoro.transform(T, c, virasoro.Diffeo(circle.Periodic(h * X.coefficients, X.wavenumbers)), M=M)
    minus = virasoro.transform(T, c, virasoro.Diffeo(circle.Periodic(-h * X.coefficients, X.wavenumbers)), M=M)
    fd = (plus - minus) / (2 * h)
    got = np.asarray(virasoro.delta(X.on_grid(M), T.on_grid(M), c))
    assert got == pytest.approx(fd, abs=1e-8)


def test_key_identity_and_gelfand_fuchs_modes():
    # references.md, Virasoro: <delta_X T, Y> = <T, [X, Y]> + c GF(X, Y); GF(cos m, sin m) = pi m^3 / 2
    # (the real form of GF(X_m, X_n) = -i pi m^3 delta_{m+n,0})
    c, M = 1.7, 64
    th = circle.grid(M)
    T = potential().on_grid(M)
    X = np.cos(2 * th) + 0.3 * np.sin(th)
    Y = np.sin(3 * th) - 0.5 * np.cos(th)
    lhs = float(circle.integrate(np.asarray(virasoro.delta(X, T, c)) * Y))
    rhs = float(circle.integrate(T * np.asarray(virasoro.bracket(X, Y)))) + c * float(virasoro.gelfand_fuchs(X, Y))
    assert lhs == pytest.approx(rhs, rel=1e-13)
    for m in (1, 2, 5):
        assert float(virasoro.gelfand_fuchs(np.cos(m * th), np.sin(m * th))) == pytest.approx(np.pi * m**3 / 2, rel=1e-13)
