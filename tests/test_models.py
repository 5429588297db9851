"""The bundled models reproduce published values (docs/references.md) and pass every check."""

import math

import numpy as np
import pytest
import scipy.integrate

import hamcheck


def test_oscillator_moment_map(oscillator_mod):
    # docs/references.md row F1: mu_k = -|z_k|^2 / 2 for the standard circle actions (weights 1)
    m = oscillator_mod.build([[1, 0], [0, 1]], name="C2")
    x = np.array([0.3, -1.1, 0.8, 0.4])
    assert np.asarray(m.moment(x)) == pytest.approx([-(0.09 + 1.21) / 2, -(0.64 + 0.16) / 2], rel=1e-15)
    assert hamcheck.check(m, points=8).passed


def test_sphere_localization_sinh_formula(sphere_mod):
    # docs/references.md row F2 (Duistermaat–Heckman 1982): int exp(s xi.p) dA = 4 pi sinh(s|xi|)/(s|xi|), xi = e_3
    s = 1.7
    omega = lambda r: 4 / (1 + r * r) ** 2  # noqa: E731  area density of the chart, polar radius r
    height = lambda r: (1 - r * r) / (1 + r * r)  # noqa: E731  p_3 on the circle of radius r
    value, err = scipy.integrate.quad(lambda r: 2 * math.pi * r * omega(r) * math.exp(s * height(r)), 0, np.inf,
                                      epsabs=1e-13, epsrel=1e-13)
    assert value == pytest.approx(4 * math.pi * math.sinh(s) / s, rel=1e-10)
    # the bundled model's form and moment map are the ones integrated here
    x = np.array([0.4, -0.7])
    r = float(np.hypot(*x))
    assert float(sphere_mod.area_form(x)[0, 1]) == pytest.approx(omega(r), rel=1e-14)
    assert float(sphere_mod.to_sphere(x)[2]) == pytest.approx(height(r), rel=1e-14)


@pytest.mark.parametrize("n", [1, 2, 3])
def test_fubini_study_pfaffian(cpn_mod, n):
    # docs/references.md row F3: the Pfaffian of the Fubini–Study form on the affine chart is (1+|w|^2)^-(n+1)
    rng = np.random.default_rng(n)
    for _ in range(3):
        x = rng.standard_normal(2 * n)
        W = np.asarray(cpn_mod.fubini_study(x))
        pf = math.sqrt(np.linalg.det(W))  # det = Pf^2 for an antisymmetric matrix
        assert pf == pytest.approx((1 + x @ x) ** -(n + 1), rel=1e-12)


def test_cp1_volume_is_pi(cpn_mod):
    # docs/references.md row F3: vol(CP^n) = pi^n / n!; for n = 1 integrate the Pfaffian in polar coordinates
    density = lambda r: float(cpn_mod.fubini_study(np.array([r, 0.0]))[0, 1])  # noqa: E731 (rotation invariant)
    value, _ = scipy.integrate.quad(lambda r: 2 * math.pi * r * density(r), 0, np.inf, epsrel=1e-12)
    assert value == pytest.approx(math.pi, rel=1e-9)


def test_cpn_torus_moment_values(cpn_mod):
    # docs/references.md row F3: mu_k = -|w_k|^2 / (2 (1 + |w|^2)); the image lies in conv{0, -e_k/2}
    m = cpn_mod.cp2_torus
    x = np.array([0.5, -0.2, 1.0, 0.3])  # w = (0.5 + 1i, -0.2 + 0.3i)
    w2 = np.array([0.25 + 1.0, 0.04 + 0.09])
    assert np.asarray(m.moment(x)) == pytest.approx(-w2 / (2 * (1 + w2.sum())), rel=1e-14)
    mu = np.stack([np.asarray(m.moment(p)) for p in np.random.default_rng(0).standard_normal((200, 4))])
    assert np.all(mu <= 0) and np.all(mu.sum(axis=1) >= -0.5)


def test_cpn_unitary_restricts_to_the_torus(cpn_mod):
    # the diagonal generators i E_kk (k >= 1) of u(3) are the chart torus: same moment components
    x = np.random.default_rng(3).standard_normal(4)
    mu_u = np.asarray(cpn_mod.cp2_unitary.moment(x))
    mu_t = np.asarray(cpn_mod.cp2_torus.moment(x))
    assert mu_u[1:3] == pytest.approx(mu_t, rel=1e-13)


def test_half_plane_matrix_moment_map(half_plane_mod):
    # docs/references.md row F6: M(z) = y^-1 [[-x, x^2+y^2], [-1, x]] has det 1 and M(g.z) = g M(z) g^-1
    m = half_plane_mod
    rng = np.random.default_rng(5)
    for _ in range(3):
        x = m.sample(rng)
        muH, muE, muF = np.asarray(m.moment(x))
        # <M, xi> = tr(M xi) pairs with H, E, F as (-2x/y, -1/y, (x^2+y^2)/y)
        M = np.array([[muH / 2, muF], [muE, -muH / 2]])
        assert np.linalg.det(M) == pytest.approx(1.0, rel=1e-12)
        g = m.SL2.random_group_elements(rng, 1, 0.5)[0]
        gx = np.asarray(m.mobius(g, x))
        muH2, muE2, muF2 = np.asarray(m.moment(gx))
        M2 = np.array([[muH2 / 2, muF2], [muE2, -muH2 / 2]])
        assert M2 == pytest.approx(g @ M @ np.linalg.inv(g), rel=1e-10, abs=1e-12)


def test_cotangent_value(cotangent_mod):
    # docs/references.md row F5: q = (1,2,3), p = (4,5,6) gives mu = q x p = (-3, 6, -3)
    mu = np.asarray(cotangent_mod.cotangent_so3.moment(np.array([1.0, 2, 3, 4, 5, 6])))
    assert mu == pytest.approx([-3, 6, -3], abs=1e-15)


def test_larger_projective_space_passes(cpn_mod):
    # an unseen size: CP^4 with U(5) (dim 8, algebra dim 25)
    assert hamcheck.check(cpn_mod.unitary(4), points=6).passed
