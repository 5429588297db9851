"""coadjoint_orbit: chart, KKS form, inclusion moment map and finite action pass every check.

References: docs/references.md row F2b (SO(3) orbit of radius lambda: volume 4 pi lambda,
moment map = inclusion), F4b (U(n) orbit volume, Macdonald 1980) and F4 (HCIZ).
Orbit dimension = dim g - dim stabilizer (a fact of the trade).
"""

import math

import numpy as np
import pytest

import hamcheck
from hamcheck import LieAlgebra, ModelError
from hamcheck.orbits import coadjoint_orbit, stabilizer_dimension, unitary_flag_chart

SO3 = [np.array([[0, 0, 0], [0, 0, -1], [0, 1, 0]]), np.array([[0, 0, 1], [0, 0, 0], [-1, 0, 0]]),
       np.array([[0, -1, 0], [1, 0, 0], [0, 0, 0]])]
PAULI = [np.array([[0, 1], [1, 0]]), np.array([[0, -1j], [1j, 0]]), np.diag([1.0, -1.0])]


def gell_mann():
    m = np.zeros((8, 3, 3), complex)
    m[0][0, 1] = m[0][1, 0] = 1
    m[1][0, 1], m[1][1, 0] = -1j, 1j
    m[2] = np.diag([1, -1, 0])
    m[3][0, 2] = m[3][2, 0] = 1
    m[4][0, 2], m[4][2, 0] = -1j, 1j
    m[5][1, 2] = m[5][2, 1] = 1
    m[6][1, 2], m[6][2, 1] = -1j, 1j
    m[7] = np.diag([1, 1, -2]) / np.sqrt(3)
    return LieAlgebra.from_matrices([1j * a / 2 for a in m])


def un(n):
    """u(n) with the pairing <H, xi> = i tr(H xi) of docs/references.md row F4b."""
    basis = []
    for j in range(n):
        basis.append(np.diag([1j if k == j else 0 for k in range(n)]))
    for j in range(n):
        for k in range(j + 1, n):
            E = np.zeros((n, n), complex)
            E[j, k], E[k, j] = 1, -1
            basis.append(E)
            basis.append(1j * np.abs(E))
    return LieAlgebra.from_matrices(basis)


def components(alg, H):
    return np.array([np.real(1j * np.trace(H @ e)) for e in alg.basis])


SU3 = gell_mann()
CASES = {
    "so3": (LieAlgebra.from_matrices(SO3), [0.3, -0.5, 1.2], 2),
    "su2": (LieAlgebra.from_matrices([1j * s / 2 for s in PAULI]), [0.2, 0.1, 0.9], 2),
    "sl2-elliptic": (LieAlgebra.from_matrices([np.diag([1.0, -1.0]), np.array([[0, 1.0], [0, 0]]),
                                               np.array([[0, 0], [1.0, 0]])]), [0.0, 1.0, -1.0], 2),
    "su3-regular": (SU3, components(SU3, np.diag([1.0, 0.3, -1.3])), 6),
    "su3-singular": (SU3, components(SU3, np.diag([1.0, 1.0, -2.0])), 4),
}


def test_orbit_dimensions():
    for alg, point, dim in CASES.values():
        assert alg.dim - stabilizer_dimension(alg, point) == dim


@pytest.mark.parametrize("case", ["so3", pytest.param("su2", marks=pytest.mark.slow),
                                  pytest.param("sl2-elliptic", marks=pytest.mark.slow),
                                  pytest.param("su3-regular", marks=pytest.mark.slow),
                                  pytest.param("su3-singular", marks=pytest.mark.slow)])
def test_orbit_passes_every_check(case):
    alg, point, dim = CASES[case]
    m = coadjoint_orbit(alg, point)
    assert m.dim == dim
    # 32 points, as in tests/test_self_consistency.py: the same orbits there then reuse these compiled
    # programs from the persistent cache (same program, same shapes) instead of compiling them again
    r = hamcheck.check(m, points=32)
    assert r.passed, r.results
    x = m.sample(np.random.default_rng(1))
    mu = np.asarray(m.moment_at(x))
    # the moment map is the inclusion: mu stays on the orbit (same invariants); for so(3) |mu| is conserved
    if case == "so3":
        assert np.linalg.norm(mu) == pytest.approx(np.linalg.norm(point), rel=1e-13)


def test_planted_wrong_form_is_caught():
    # negative control: KKS form doubled -> the moment equation fails with factor 2 diagnosed
    alg, point, _ = CASES["so3"]
    m = coadjoint_orbit(alg, point)
    bad = hamcheck.Model("so3 2omega", 2, form=lambda y: 2 * m.form(y), algebra=alg, moment=m.moment,
                         vector_fields=m.vector_fields)
    r = hamcheck.check(bad, points=4, only=["moment_map"])
    assert r.results["moment_map"].status == "fail"
    assert [f.kind for f in r.findings] == ["moment-scale"]


def test_u2_orbit_volume_and_hciz():
    # docs/references.md row F4b (Macdonald): vol = 2 pi |b1 - b2|; localization = vol * HCIZ (docs/references.md row F4)
    b, a, t = (1.3, 0.2), (0.9, -0.4), 1.0
    alg = un(2)
    m = coadjoint_orbit(alg, components(alg, np.diag(b)), chart=unitary_flag_chart(2))
    # xi = -i diag(a): <H, xi> = i tr(H xi) = tr(A H)
    xi = np.array([-a[0], -a[1], 0.0, 0.0])
    loc = hamcheck.localization(m, xi, t, rtol=1e-8, starts=16)
    hciz = 1.58217045440591  # docs/references.md row F4
    vol = 2 * math.pi * abs(b[0] - b[1])
    assert loc.integral == pytest.approx(vol * hciz, rel=1e-7)
    assert loc.fixed_point_sum == pytest.approx(vol * hciz, rel=1e-12)
    assert len(loc.fixed_points) == 2


def test_point_fixed_by_everything_is_refused():
    with pytest.raises(ModelError, match="single point"):
        coadjoint_orbit(LieAlgebra.from_matrices(SO3), [0.0, 0.0, 0.0])
    with pytest.raises(ModelError, match="3 finite"):
        coadjoint_orbit(LieAlgebra.from_matrices(SO3), [1.0, 2.0])


def test_default_chart_of_a_compact_orbit_covers_it_once():
    # the built so(3) orbit integrates with no extra arguments; docs/references.md row F2:
    # int_{S^2} exp(s xi.p) dA = 4 pi sinh(s|xi|)/(s|xi|) (Duistermaat-Heckman), KKS volume 4 pi lambda (row F2b)
    m = coadjoint_orbit(LieAlgebra.from_matrices(SO3), [0.0, 0.0, 1.0])
    assert m.construction.kind == "so3-flag" and m.construction.covers_once and m.domain is not None
    xi, s = np.array([0.4, -0.3, 0.5]), 1.3
    a = s * np.linalg.norm(xi)
    loc = hamcheck.localization(m, xi, s)
    assert loc.integral == pytest.approx(4 * math.pi * math.sinh(a) / a, rel=1e-9)
    assert len(loc.fixed_points) == 2  # +- xi/|xi|, both in the chart
    assert loc.fixed_point_sum == pytest.approx(4 * math.pi * math.sinh(a) / a, rel=1e-12)
    vol = hamcheck.localization(coadjoint_orbit(LieAlgebra.from_matrices(SO3), [0.3, -0.5, 1.2]), xi, 0.0)
    assert vol.integral == pytest.approx(4 * math.pi * math.sqrt(0.3**2 + 0.5**2 + 1.2**2), rel=1e-9)


def test_orbits_without_a_covering_chart_say_so():
    # a singular u(3) orbit keeps the local exponential chart and records that it does not cover the orbit
    alg = un(3)
    m = coadjoint_orbit(alg, components(alg, np.diag([0.5, 0.5, -1.0])))
    assert m.dim == 4 and m.construction.kind == "exponential" and not m.construction.covers_once
    assert "singular" in m.construction.reason and m.domain is None
    with pytest.raises(ModelError, match="do not cover the space once"):
        hamcheck.localization(m, np.array([0.5, -0.2, -0.4] + [0.0] * 6), 1.0, starts=4)


def _hciz_times_volume(a, b, t):
    """Orbit volume (docs/references.md row F4b, Macdonald 1980) times the HCIZ integral (row F4,
    Harish-Chandra 1957; Itzykson-Zuber 1980), evaluated independently with mpmath at 30 digits."""
    import mpmath

    n = len(a)
    with mpmath.workdps(30):
        det = mpmath.det(mpmath.matrix([[mpmath.exp(t * ai * bj) for bj in b] for ai in a]))

        def vandermonde(v):
            return mpmath.fprod(v[i] - v[j] for i in range(n) for j in range(i + 1, n))

        superfactorial = mpmath.fprod(mpmath.factorial(p) for p in range(1, n))
        hciz = superfactorial * det / (t ** (n * (n - 1) // 2) * vandermonde(a) * vandermonde(b))
        vol = (2 * mpmath.pi) ** (n * (n - 1) // 2) * abs(vandermonde(b)) / superfactorial
        return float(vol * hciz)


def test_u3_orbit_localization_is_volume_times_hciz():
    # the built (default, covering) chart of a regular u(3) orbit integrates with no extra arguments;
    # localization = vol * HCIZ (docs/references.md rows F4, F4b)
    b, a, t = (1.1, 0.3, -0.6), (0.5, -0.2, -0.4), 1.0
    alg = un(3)
    m = coadjoint_orbit(alg, components(alg, np.diag(b)))
    assert m.construction.kind == "unitary-flag" and m.construction.covers_once
    xi = np.array([-a[0], -a[1], -a[2]] + [0.0] * 6)  # <H, xi> = i tr(H xi) = tr(A H)
    loc = hamcheck.localization(m, xi, t, samples=2**15, starts=48)
    expected = _hciz_times_volume(a, b, t)
    assert len(loc.fixed_points) == 6  # the Weyl group orbit of diag(b)
    assert loc.fixed_point_sum == pytest.approx(expected, rel=1e-10)
    # the Sobol estimate is ~0.5% at 2^15 points in dimension 6; its own error estimate must cover it
    assert abs(loc.integral - expected) <= 3 * loc.error
    assert loc.agrees


def test_u3_localization_negative_control_doubled_form():
    # planted mistake: the KKS form doubled (moment map unchanged) multiplies the volume form by 2^3,
    # so the integral no longer matches vol * HCIZ, while the fixed-point side still does
    b, a, t = (1.1, 0.3, -0.6), (0.5, -0.2, -0.4), 1.0
    alg = un(3)
    m = coadjoint_orbit(alg, components(alg, np.diag(b)))
    bad = hamcheck.Model("u3 2omega", m.dim, form=lambda y: 2 * m.form(y), algebra=alg, moment=m.moment,
                         vector_fields=m.vector_fields, domain=m.domain)
    xi = np.array([-a[0], -a[1], -a[2]] + [0.0] * 6)
    loc = hamcheck.localization(bad, xi, t, samples=2**12, starts=48)
    expected = _hciz_times_volume(a, b, t)
    assert abs(loc.integral - 8 * expected) <= 3 * loc.error + 0.05 * 8 * expected
    assert loc.fixed_point_sum == pytest.approx(expected, rel=1e-10)
    assert not loc.agrees
