"""Closed-form hyperbolic disks: curvature, cone angles, q, distances, boundary potentials, validation findings.

Sources named beside each check. "from memory" marks facts of the field recalled
without a reference at hand; each is verified here before the package relies on it.
"""

import math

import jax
import jax.numpy as jnp
import numpy as np
import pytest

import hamcheck
from hamcheck import circle, hyperbolic, virasoro

C = 2.0  # central charge used throughout (an arbitrary non-unit value catches c/4 vs 1/4 slips)


def q_from_u(u, z):
    """q = u_zz - u_z^2 by jax autodiff, d/dz = (d/dx - i d/dy)/2."""
    g = jax.grad(u, argnums=(0, 1))
    H = jax.hessian(u, argnums=(0, 1))
    out = []
    for w in np.atleast_1d(z):
        ux, uy = g(w.real, w.imag)
        (uxx, uxy), (_, uyy) = H(w.real, w.imag)
        uz = (ux - 1j * uy) / 2
        out.append((uxx - 2j * uxy - uyy) / 4 - uz**2)
    return np.array(out, complex)


def test_poincare_disk_curvature_and_orbit():
    m = hyperbolic.poincare_disk()
    r = hyperbolic.check_metric(m, points=16, seed=1)
    assert r.passed, r
    # Liouville: u = log(2/(1-|z|^2)) has Laplacian = e^{2u} = 4/(1-|z|^2)^2 (standard; from memory)
    assert r.results["liouville"].residual < 1e-13
    T = hyperbolic.boundary_potential(m, C)
    assert isinstance(T, np.ndarray) and T.shape == (256,) and T.error < 1e-12
    # sl(2) orbit constant c/4 (Balog-Feher-Palla 1998 via hamcheck's virasoro.md reference: T0 = c n^2/4, n = 1)
    assert np.allclose(T, C / 4, atol=1e-14)
    d = hyperbolic.classify_metric(m, c=C)
    # T0 = c n^2/4 with n = 1: monodromy (-1)^1 I (virasoro.md), so the class is -identity
    assert d["class"] == "-identity" and d["stabilizer_dim"] == 3 and abs(d["representative"] - C / 4) < 1e-12


@pytest.mark.parametrize("alpha,p", [(1.0, 0j), (math.pi, 0.3 + 0.2j), (5.0, -0.4j), (4 * math.pi, 0.2)])
def test_cone_disk_q_is_u_zz_minus_u_z_squared(alpha, p):
    # q = u_zz - u_z^2 is holomorphic and equals (1-beta^2)/4 (w'/w)^2 (S(z^beta) = (1-beta^2)/(2 z^2),
    # Schwarzian chain rule; from memory) -- checked here against autodiff of the closed-form u
    m = hyperbolic.cone_disk(alpha, p)
    z = np.array([0.5 + 0.1j, -0.3 - 0.6j, 0.1j + 0.05]) + 0.01
    assert np.allclose(q_from_u(m.u, z), m.q(z), rtol=1e-10, atol=1e-10)
    beta = alpha / (2 * math.pi)
    eps = 1e-4 * (1 - abs(p))
    # double pole coefficient (1 - beta^2)/4 at the cone point (from memory)
    w = p + eps
    assert abs(m.q(w) * eps**2 - (1 - beta**2) / 4) < 1e-3


@pytest.mark.parametrize("alpha", [0.7, 2.0, math.pi, 5.0, 4 * math.pi, 6 * math.pi])
def test_cone_disk_validation_and_orbit_constant(alpha):
    m = hyperbolic.cone_disk(alpha, 0.25 - 0.1j)
    r = hyperbolic.check_metric(m, points=12, seed=2)
    assert r.passed, r
    beta = alpha / (2 * math.pi)
    T = hyperbolic.boundary_potential(m, C)
    d = virasoro.classify(T, c=C)
    # orbit of the constant c (alpha/2pi)^2/4 (from memory; the 1-cone conjecture of the issue, verified here)
    assert abs(d["representative"] - C * beta**2 / 4) < 1e-9
    # trace of the Hill monodromy 2 cos(2 pi sqrt(T0/c)) = 2 cos(alpha/2) (virasoro.md, constants)
    assert abs(d["trace"] - 2 * math.cos(alpha / 2)) < 1e-9
    if alpha in (4 * math.pi, 6 * math.pi):
        # T0 = c n^2/4 with n = 2, 3: monodromy (-1)^n I, 3-dimensional stabilizer (virasoro.md)
        assert d["class"] == ("+identity" if alpha == 4 * math.pi else "-identity")
        assert d["stabilizer_dim"] == 3 and d["stabilizer_dim_fourier"] == 3


def test_one_cone_class_does_not_depend_on_position():
    # Moving the cone by a disk automorphism acts on T by the coadjoint action (invariant trace, class; virasoro.md)
    invs = [virasoro.classify(hyperbolic.boundary_potential(hyperbolic.cone_disk(2.5, p), C), c=C)
            for p in (0j, 0.5, -0.3 + 0.6j, 0.7j)]
    for d in invs[1:]:
        assert d["class"] == invs[0]["class"] == "elliptic"
        assert abs(d["trace"] - invs[0]["trace"]) < 1e-9
        assert abs(d["rotation_number"] - invs[0]["rotation_number"]) < 1e-12


def circle_lift(a):
    """F with e^{iF} = phi_a(e^{i theta}), phi_a(z) = (z - a)/(1 - conj(a) z): F = theta + 2 arg(1 - a e^{-i theta})."""
    th = circle.grid(128)  # |a|^64 < 1e-25; more samples only add n^3 x round-off to S(F)
    disp = 2 * np.angle(1 - a * np.exp(-1j * th))
    return virasoro.Diffeo(circle.Periodic.from_samples(disp))  # geometric decay |a|^n


def test_moebius_equivariance_cone_disk():
    # pulling g back by phi_a moves the cone from 0 to a and changes T by Phi_F, F the boundary lift of phi_a
    # (right action, virasoro.md: Phi_F T = (T o F) F'^2 + (c/2) S(F))
    a = 0.35 - 0.2j
    T0 = hyperbolic.boundary_potential(hyperbolic.cone_disk(2.0), C, M=256)
    Ta = hyperbolic.boundary_potential(hyperbolic.cone_disk(2.0, a), C, M=256)
    moved = virasoro.transform(np.asarray(T0), C, circle_lift(a), M=256)
    assert np.abs(moved - Ta).max() < 1e-10


def test_distance_poincare_and_cone_disk():
    m = hyperbolic.poincare_disk()
    for z1, z2 in [(0.1 + 0.2j, -0.5 + 0.3j), (0.6, -0.6j)]:
        d = m.distance(z1, z2)
        # arccosh(1 + 2|z1-z2|^2/((1-|z1|^2)(1-|z2|^2))) (standard formula, e.g. Beardon, Geometry of discrete groups)
        assert abs(d - hyperbolic.poincare_distance(z1, z2)) < 1e-9 and d.error < 1e-8
    beta = 0.4
    c = hyperbolic.cone_disk(2 * math.pi * beta, 0.2j)
    z = 0.2j + 0.5 * (1 - 0.04) / (1 + 0.2j * 0.5 * 0 + 0)  # any point; the closed form goes through phi
    d = c.distance(0.2j, z)
    w = abs((z - 0.2j) / (1 - np.conj(0.2j) * z))
    # distance from the apex: int_0^|w| 2 beta r^(beta-1)/(1 - r^(2 beta)) dr = 2 artanh(|w|^beta) (closed form)
    assert abs(d - 2 * math.atanh(w**beta)) < max(10 * d.error, 1e-8)


# ------------------------------------------------------------- negative controls
def test_wrong_curvature_sign_is_found():
    # planted mistake: the spherical metric 2/(1+|z|^2) (curvature +1, from memory)
    m = hyperbolic.Metric(lambda x, y: jnp.log(2 / (1 + x * x + y * y)), name="sphere")
    r = hyperbolic.check_metric(m, points=12)
    assert not r.passed and r.results["liouville"].status == "fail"
    f = [f for f in r.findings if f.kind == "curvature-sign"]
    assert f and abs(f[0].data["curvature"] - 1) < 1e-9 and "--only liouville" in f[0].replay


def test_scaled_curvature_is_found():
    # planted mistake: a factor 2 missing in the Poincaré factor -> curvature -4
    m = hyperbolic.Metric(lambda x, y: jnp.log(1 / (1 - x * x - y * y)), name="half")
    r = hyperbolic.check_metric(m, points=12)
    f = {f.kind: f for f in r.findings}
    assert abs(f["curvature-scale"].data["curvature"] + 4) < 1e-9
    assert abs(f["boundary-scale"].data["limit"] + math.log(2)) < 1e-6


@pytest.mark.parametrize("factor", [2.0, 0.5])
def test_wrong_cone_angle_is_found(factor):
    # planted mistake: declared angle off by a factor
    good = hyperbolic.cone_disk(2.0, 0.3)
    m = hyperbolic.Metric(good.u, cones=[(0.3, 2.0 * factor)], name="wrong angle")
    r = hyperbolic.check_metric(m, points=8, only=("cone_angles",))
    (f,) = [f for f in r.findings if f.kind == "cone-angle"]
    assert abs(f.data["ratio"] - 1 / factor) < 1e-8
    assert hyperbolic.check_metric(good, points=8, only=("cone_angles",)).passed


def test_incomplete_metric_is_found():
    # planted mistake: the hyperbolic metric of the disk of radius 1.5 restricted to the unit disk
    # (curvature -1, but the unit circle is at finite distance)
    R = 1.5
    m = hyperbolic.Metric(lambda x, y: jnp.log(2 * R / (R * R - x * x - y * y)), name="radius 1.5")
    r = hyperbolic.check_metric(m, points=12)
    assert r.results["liouville"].status == "pass"
    (f,) = [f for f in r.findings if f.kind == "incomplete-boundary"]
    assert abs(f.data["rate"] - 1) < 0.05  # u + log(1-|z|^2) ~ log(1-|z|): e^u bounded at the circle


def test_bad_inputs_give_one_clear_error():
    with pytest.raises(hamcheck.HamcheckError, match="inside the unit disk"):
        hyperbolic.cone_disk(1.0, 1.2)
    with pytest.raises(hamcheck.HamcheckError, match="positive"):
        hyperbolic.cone_disk(-1.0)
    with pytest.raises(hamcheck.HamcheckError, match="jax"):
        hyperbolic.Metric(lambda x, y: float(np.log(2 / (1 - x * x - y * y))))
    with pytest.raises(hamcheck.HamcheckError, match="below 2 pi"):
        hyperbolic.cone_metric([(0.1, 7.0), (-0.1, 1.0)])
