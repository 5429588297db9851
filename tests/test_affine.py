"""Tests of hamcheck.affine: loop groups acting on connections on the circle.

References: /work/shared/reference/affine.md (values checked there numerically),
Pressley–Segal, *Loop Groups*, ch. 4 (from memory), scipy's DOP853 as an
independent oracle for holonomies. jax compilations are the cost here: the
orbit models and resolution studies are built once per module (fixtures).
"""

from __future__ import annotations

import functools
import json

import numpy as np
import pytest
import scipy.linalg
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp

import hamcheck
from hamcheck import affine as af
from hamcheck.errors import UsageError

GROUPS = [af.SU2, af.SO3, af.U1, af.SU(3)]
#: exponentials and products of unitary matrices: a few hundred ulps
ROUNDOFF = 1e-13
NO_SEARCH = hamcheck.Settings(search_starts=0)


def rel(a, b):
    a, b = np.asarray(a), np.asarray(b)
    return float(np.max(np.abs(a - b)) / max(np.max(np.abs(a)), np.max(np.abs(b)), 1e-300))


def std_action(c):
    return lambda g, A: af.gauge_action(g, A, c)


# ------------------------------------------------------------ conventions
def test_su2_basis_conventions():
    # affine.md: e_k = -i sigma_k / 2, [e_j, e_k] = eps_jkl e_l, <e_j, e_k> = delta_jk / 2
    E = af.SU2.basis
    assert np.allclose(E[0] @ E[1] - E[1] @ E[0], E[2], atol=1e-15)
    assert np.allclose(E[1] @ E[2] - E[2] @ E[1], E[0], atol=1e-15)
    gram = -np.einsum("aij,bji->ab", E, E).real
    assert np.allclose(gram, np.eye(3) / 2, atol=1e-15)
    # so(3) with the scale 1/4 has the same structure constants and Gram matrix (su(2) = so(3))
    L = af.SO3.basis
    assert np.allclose(L[0] @ L[1] - L[1] @ L[0], L[2], atol=1e-15)
    assert np.allclose(np.diag(af.SO3.norms), np.eye(3) / 2, atol=1e-15)


@pytest.mark.parametrize("group", GROUPS, ids=lambda g: g.name)
def test_group_exp_matches_scipy(group):
    # common practice: closed-form exponentials against scipy's Pade expm
    rng = np.random.default_rng(3)
    X = group.element(2.0 * rng.standard_normal((5, group.dim)))
    ref = np.stack([scipy.linalg.expm(x) for x in X])
    assert rel(group.exp(X), ref) <= ROUNDOFF


def test_su2_coordinate_formulas_match_matrices_and_are_smooth_at_zero():
    # Ad_{exp X} is the rotation by |x| about x; dexp = (e^ad - 1)/ad (from memory)
    import jax

    Ad, dexp = jax.jit(af.su2_Ad), jax.jit(af.su2_dexp)  # compile once, not per eager op
    rng = np.random.default_rng(4)
    xs = np.concatenate([rng.standard_normal((3, 3)) * s for s in (1e-6, 0.3, 2.5)])
    for x in xs:
        y = rng.standard_normal(3)
        g = af.SU2.exp(af.SU2.element(x))
        assert rel(np.asarray(Ad(x, y)), af.SU2.coordinates(af.SU2.conj(g, af.SU2.element(y)))) <= ROUNDOFF
        dg = scipy.linalg.expm_frechet(af.SU2.element(x), af.SU2.element(y))[1]
        right = af.SU2.coordinates(dg @ np.conj(g.T))
        assert rel(np.asarray(dexp(x, y)), right) <= 1e-12
    # second derivative of dexp at 0 along (u, u): d^2/dt^2 dexp(tu) y = 2 * (1/6) u x (u x y)
    u, y = np.array([0.3, -0.2, 0.5]), np.array([1.0, 0.4, -0.7])
    f = lambda t: af.su2_dexp(t * u, y)  # noqa: E731
    second = np.asarray(jax.jit(jax.jacfwd(jax.jacfwd(f)))(0.0))
    assert np.all(np.isfinite(second))
    assert np.allclose(second, np.cross(u, np.cross(u, y)) / 3, rtol=1e-12, atol=1e-15)


# ---------------------------------------------------------- gauge action
@pytest.mark.parametrize("group", GROUPS, ids=lambda g: g.name)
def test_standard_gauge_action_passes_every_named_check(group):
    # affine.md: a left action; pairing identity; Hol(g.A) = g(0) Hol(A) g(0)^-1
    out = af.check_gauge_action(std_action(0.8), 0.8, group)
    assert all(v["passed"] for v in out.values()), out


def test_flipped_sign_of_c_g_prime_is_caught_by_pairing_and_holonomy_checks():
    # negative control (affine.md): g A g^-1 - c g' g^-1 composes (it is the level -c
    # orbit) but breaks the level-c pairing identity and the holonomy covariance
    G, c = af.SU2, 0.8
    flipped = lambda g, A: G.coordinates(G.conj(g.values, G.element(A))) - c * g.right_maurer_cartan()  # noqa: E731
    out = af.check_gauge_action(flipped, c)
    assert out["composition"]["passed"]
    assert not out["pairing_identity"]["passed"] and out["pairing_identity"]["residual"] > 0.1
    assert not out["holonomy_covariance"]["passed"] and out["holonomy_covariance"]["residual"] > 0.1


def test_right_action_is_caught_by_the_composition_check():
    # negative control (affine.md): g^-1 A g + c g^-1 g' is a right action
    G, c = af.SU2, 0.8

    def right(g, A):
        gi = np.conj(np.swapaxes(g.values, -1, -2))
        return G.coordinates(gi @ G.element(A) @ g.values) + c * g.left_maurer_cartan()

    out = af.check_gauge_action(right, c)
    assert not out["composition"]["passed"] and out["composition"]["residual"] > 0.1


def test_wrong_level_in_the_action_is_caught_by_the_pairing_identity():
    # negative control: c/2 in front of g' g^-1
    G, c = af.SU2, 0.8
    half = lambda g, A: G.coordinates(G.conj(g.values, G.element(A))) + 0.5 * c * g.right_maurer_cartan()  # noqa: E731
    out = af.check_gauge_action(half, c)
    assert not out["pairing_identity"]["passed"] and out["pairing_identity"]["residual"] > 0.05


def test_infinitesimal_pairing_identity_spectral():
    # affine.md: int <delta_xi A, eta> = -(int <A, [xi, eta]> + c int <xi, eta'>)
    rng = np.random.default_rng(5)
    M, c = 48, 1.7
    A = af._random_connection(af.SU2, rng, M)
    xi = af._random_connection(af.SU2, rng, M, modes=4)
    eta = af._random_connection(af.SU2, rng, M, modes=4)
    lhs = af.pairing(af.infinitesimal_action(xi, A, c), eta)
    rhs = -(af.pairing(A, af.SU2.bracket(xi, eta)) + af.central_cocycle(xi, eta, c))
    assert lhs == pytest.approx(rhs, rel=1e-13, abs=1e-13)
    # the cocycle is antisymmetric (integration by parts)
    assert af.central_cocycle(xi, eta, c) == pytest.approx(-af.central_cocycle(eta, xi, c), rel=1e-13, abs=1e-13)


def test_extension_adjoint_preserves_the_pairing():
    # affine.md / Pressley-Segal: <(g.A, c), Ad_g(eta, b)> = <(A, c), (eta, b)>
    rng = np.random.default_rng(6)
    M, c, b = 64, 1.3, 0.4
    A = af._random_connection(af.SU2, rng, M)
    eta = af._random_connection(af.SU2, rng, M)
    g = af._random_loop(af.SU2, rng, M)
    eta2, b2 = af.extension_adjoint(g, eta, b)
    lhs = af.pairing(af.gauge_action(g, A, c), eta2) + c * b2
    rhs = af.pairing(A, eta) + c * b
    assert lhs == pytest.approx(rhs, rel=1e-13)


def test_even_winding_loop_shifts_a_by_2c_and_keeps_the_holonomy():
    # affine.md: exp(k theta e_3) shifts a by k c; a loop in SU(2) only for even k
    M, c, a = 32, 0.7, 0.25
    g = af.Loop.winding(af.SU2, 2, M)
    A2 = af.gauge_action(g, af.constant_connection(a, M), c)
    assert np.allclose(A2[:, 2], a + 2 * c, rtol=0, atol=1e-14)
    H1 = af.holonomy(af.constant_connection(a, M), c).matrix
    H2 = af.holonomy(A2, c).matrix
    assert rel(H1, H2) <= 1e-12
    # k = 1 is not a closed loop in SU(2): g(2 pi) = -I
    assert np.allclose(af.SU2.exp(2 * np.pi * af.SU2.basis[2]), -np.eye(2), atol=1e-15)


# ------------------------------------------------------------- holonomy
@pytest.mark.parametrize("a,c", [(0.3, 1.0), (1.0, 1.0), (2.0, 1.0), (0.45, 0.6), (-0.7, 1.1)])
def test_holonomy_of_constant_connections(a, c):
    # affine.md: Hol(a e_3) = diag(e^{-i pi a/c}, e^{i pi a/c}), trace 2 cos(pi a / c)
    H = af.holonomy(af.constant_connection(a, 16), c)
    assert H.trace.real == pytest.approx(2 * np.cos(np.pi * a / c), abs=1e-13)
    ref = np.diag([np.exp(-1j * np.pi * a / c), np.exp(1j * np.pi * a / c)])
    assert rel(H.matrix, ref) <= 1e-13
    cl = af.su2_class(H.matrix)
    q = abs(a / c) % 2
    assert cl["a_over_c"] == pytest.approx(min(q, 2 - q), abs=1e-12)


def test_holonomy_against_dop853():
    # independent oracle: scipy's DOP853 on U' = (1/c) A U with the trigonometric interpolant
    rng = np.random.default_rng(1)
    M, c = 32, 0.7
    A = af._random_connection(af.SU2, rng, M, modes=4)
    coef = np.fft.fft(af.SU2.element(A), axis=0) / M
    k = np.fft.fftfreq(M, 1 / M)
    k[M // 2] = 0  # the data has no Nyquist content (modes <= 4)

    def rhs(t, y):
        At = np.einsum("k,kij->ij", np.exp(1j * k * t), coef)
        return (At @ y.reshape(2, 2) / c).ravel()

    sol = solve_ivp(rhs, (0, 2 * np.pi), np.eye(2, dtype=complex).ravel(), method="DOP853", rtol=1e-13, atol=1e-13)
    H = af.holonomy(A, c)
    # DOP853 at rtol 1e-13 over one period accumulates ~1e-13; the Magnus result is tighter
    assert rel(H.matrix, sol.y[:, -1].reshape(2, 2)) <= 1e-11
    assert H.error <= af.HOLONOMY_TOL


def test_holonomy_integrator_is_sixth_order():
    # the Magnus scheme's order (Blanes et al., from memory): halving the step divides the error by ~64
    rng = np.random.default_rng(2)
    A = af._random_connection(af.SU2, rng, 32, modes=4)
    Am = af.SU2.element(A)
    ref = af.holonomy(A, 0.7, tol=1e-14).matrix
    errs = [np.abs(af._ordered_product(af._transport_steps(Am, 0.7, N, af.SU2)) - ref).max() for N in (64, 128)]
    assert 40 < errs[0] / errs[1] < 90


@pytest.mark.parametrize("group", GROUPS, ids=lambda g: g.name)
def test_holonomy_conjugates_under_gauge_transformations(group):
    # affine.md: Hol(g.A) = g(0) Hol(A) g(0)^-1 (1.5e-14 there)
    rng = np.random.default_rng(7)
    M, c = 64, 1.2
    A = af._random_connection(group, rng, M)
    g = af._random_loop(group, rng, M)
    H = af.holonomy(A, c, group).matrix
    Hg = af.holonomy(af.gauge_action(g, A, c), c, group).matrix
    assert rel(Hg, group.conj(g.values[0], H)) <= 1e-12


def test_u1_holonomy_is_the_exponential_of_the_integral():
    # abelian case (from memory): Hol = exp((1/c) int A e dtheta)
    rng = np.random.default_rng(8)
    A = af._random_connection(af.U1, rng, 32)
    c = 0.9
    H = af.holonomy(A, c, af.U1).matrix[0, 0]
    assert H == pytest.approx(np.exp(-0.5j * A[:, 0].mean() * 2 * np.pi / c), rel=1e-13)


# ----------------------------------------------------------- stabilizers
@pytest.mark.parametrize("a,c,dim", [(0.3, 1.0, 1), (1.0, 1.0, 3), (2.0, 1.0, 3), (1.2, 0.6, 3), (0.0, 1.0, 3), (0.999, 1.0, 1), (1.5, 1.0, 1)])
def test_stabilizer_dimensions_of_constants_two_ways(a, c, dim):
    # affine.md: dimension 1 unless a/c is an integer, then 3 (central holonomy)
    A = af.constant_connection(a, 24)
    assert af.stabilizer_dimension_fourier(A, c)["dimension"] == dim
    assert af.stabilizer_dimension_transport(A, c)["dimension"] == dim


def test_stabilizer_dimension_is_gauge_invariant():
    # affine.md: unchanged under gauge transformation; the Fourier kernel needs enough modes
    rng = np.random.default_rng(9)
    M = 64
    g = af._random_loop(af.SU2, rng, M, scale=0.3)
    for a, dim in ((2.0, 3), (0.6, 1)):
        A = af.gauge_action(g, af.constant_connection(a, M), 1.0)
        assert af.stabilizer_dimension_transport(A, 1.0)["dimension"] == dim
        assert af.stabilizer_dimension_fourier(A, 1.0, modes=24)["dimension"] == dim


@settings(max_examples=8, deadline=None)
@given(st.floats(0.02, 0.98), st.integers(0, 2), st.sampled_from([0.5, 1.0, 2.5]))
def test_non_integer_levels_have_one_dimensional_stabilizers(frac, n, c):
    # affine.md: a/c not an integer -> dimension 1 (both ways)
    A = af.constant_connection((n + frac) * c, 16)
    assert af.stabilizer_dimension_transport(A, c)["dimension"] == 1
    assert af.stabilizer_dimension_fourier(A, c)["dimension"] == 1


# ----------------------------------------------------- orbit model (jax)
@functools.cache
def small_model():
    return af.orbit_model(0.3, 1.0, 1, grid=32)


def test_orbit_form_at_base_point_is_the_kks_block_formula():
    # affine.md: (pi/2)[c n I(x)J + a J(x)I] per mode, pi c n / 2 in the e3 sector, pi a for constants
    m = small_model()
    W = np.asarray(m.form(np.zeros(m.dim)))
    assert rel(W, af.kks_form_at_base(0.3, 1.0, 1)) <= 1e-14
    # eigenvalues +-i (pi/2)(c n +- a) of the n = 1 (e1, e2) block
    idx = [i for i, (n, comp, _k) in enumerate(m.chart_labels) if n == 1 and comp < 2]
    ev = np.sort(np.abs(np.linalg.eigvals(W[np.ix_(idx, idx)]).imag))
    assert np.allclose(ev, np.sort(np.repeat([np.pi / 2 * (1 - 0.3), np.pi / 2 * (1 + 0.3)], 2)), rtol=1e-13)


def test_orbit_model_passes_every_check():
    report = hamcheck.check(small_model(), points=4, settings=NO_SEARCH)
    assert report.passed, str(report)
    for name in ("closed", "moment_map", "antisymmetric", "invariant"):
        assert report.results[name].residual <= 1e-13


@pytest.mark.parametrize(
    "formulas,check,kind",
    [
        # affine.md: g^-1 d_i g instead of (d_i g) g^-1 fails (0.31 there)
        (af.ChartFormulas(trivialization="left"), "closed", "not-closed"),
        # (flipped sign of c g' g^-1: see test_flipped_level_in_the_chart_is_caught_by_the_moment_check)
        # (the cocycle coefficient 2c is caught by moment_map in test_wrong_cocycle_is_closed_...)
        # overall sign of the form
        (af.ChartFormulas(form_sign=-1), "moment_map", "moment-sign"),
    ],
    ids=["left-trivialization", "form-sign"],
)
def test_negative_controls_of_the_chart_are_caught_by_a_named_check(formulas, check, kind):
    m = af.orbit_model(0.3, 1.0, 1, grid=32, formulas=formulas)
    report = hamcheck.check(m, points=4, only=[check], settings=NO_SEARCH)
    res = report.results[check]
    assert res.status == "fail" and res.residual > 1e-3, str(report)
    if kind:
        assert kind in {f.kind for f in report.findings}


def test_integer_a_over_c_warns_and_names_the_mode():
    assert af.degenerate_modes(2.0, 1.0, [1, 2]) == [2]
    assert af.degenerate_modes(2.0, 1.0, [1, 3]) == []
    assert af.degenerate_modes(0.0, 1.0, 2) == [0]
    # the closed formula really is singular there: blocks (pi/2)(c n - a) vanish
    W = af.kks_form_at_base(2.0, 1.0, [1, 2])
    assert np.linalg.matrix_rank(W, tol=1e-12) < W.shape[0]
    with pytest.warns(UserWarning, match=r"mode n=2.*drop mode 2"):
        af.orbit_model(-2.0, 1.0, [1, 2], grid=32)


def test_bad_orbit_arguments_raise_one_clear_message():
    with pytest.raises(UsageError, match="level c"):
        af.orbit_model(0.3, 0.0, 1)
    with pytest.raises(UsageError, match="cannot resolve mode 5"):
        af.orbit_model(0.3, 1.0, 5, grid=8)
    with pytest.raises(UsageError, match="modes"):
        af.orbit_model(0.3, 1.0, [-1])


# ----------------------------------------------------- resolution studies
@functools.cache
def study_correct():
    return af.orbit_resolution_study(0.3, 1.0, 1, grids=(4, 8, 12, 16, 24), checks=("closed", "moment_map"), points=2)


@functools.cache
def study_2c():
    f = af.ChartFormulas(cocycle_factor=2.0)
    return af.orbit_resolution_study(0.3, 1.0, 1, grids=(4, 8, 12, 16, 24), checks=("closed", "moment_map"), points=2, formulas=f)


def test_residuals_fall_spectrally_with_the_quadrature_grid(tmp_path):
    # affine.md: residuals fall spectrally with M (geometric decay) to round-off
    s = study_correct()
    assert s.verified, s.table()
    for name, study in s.studies.items():
        assert study.verdict == "converges", study.table()
        assert study.fit["best"] == "geometric"
        assert study.residuals[0] > 1e-4 and study.residuals[-1] <= 1e-13
    png = s.plot(tmp_path / "res.png")
    assert open(png, "rb").read(8) == b"\x89PNG\r\n\x1a\n"
    assert "grid M" in s.table()


def test_wrong_cocycle_is_closed_but_the_moment_check_stalls():
    # affine.md trap: with coefficient 2c the form is closed; only the moment check sees it
    s = study_2c()
    assert s.studies["closed"].residuals[-1] <= 1e-12
    assert s.studies["moment_map"].verdict == "stalls"
    assert not s.verified and "closed and wrong" in s.verdict


def test_flipped_level_in_the_chart_is_caught_by_the_moment_check():
    # affine.md: g A0 g^-1 - c g' g^-1 is the level -c orbit: closed, but H_rot = (1/2c) int <A, A>
    # carries 1/c, so the moment equation fails (same compiled study as above: formulas are runtime values)
    f = af.ChartFormulas(action_sign=-1)
    s = af.orbit_resolution_study(0.3, 1.0, 1, grids=(4, 8, 12, 16, 24), checks=("closed", "moment_map"), points=2, formulas=f)
    assert s.studies["closed"].residuals[-1] <= 1e-12
    assert s.studies["moment_map"].residuals[-1] > 0.1 and not s.verified


def test_closedness_alone_never_verifies_a_form():
    # the trap: without the moment checks the study must not say "verified", even when closed
    s = study_2c()
    only_closed = af.summarize_resolution(s.grids, {"closed": list(s.studies["closed"].residuals)})
    assert not only_closed.verified
    assert "NOT verified" in only_closed.verdict and "moment checks were not run" in only_closed.verdict
    # the same table with the moment column included is rejected for the right reason
    assert not af.summarize_resolution(s.grids, {n: list(v.residuals) for n, v in s.studies.items()}).verified


# ----------------------------------------------- the user's own action
def test_user_action_with_the_standard_level_has_ratio_one():
    alg = af.truncated_algebra(4, 1.5)
    rep = af.check_user_action(alg.bracket, alg.pairing, alg.action, 4, 1.5)
    assert rep.passed
    assert rep.ratio == pytest.approx(1.0, rel=1e-10)


@pytest.mark.parametrize("factor", [2 * np.pi, 0.5])
def test_user_action_with_a_wrong_level_factor_is_a_central_cocycle_finding(factor):
    # negative control: a factor 2 pi or 1/2 in the level shows up as the ratio
    alg = af.truncated_algebra(4, 1.5)

    def action(X, T):
        return alg.coefficients(af.SU2.bracket(alg.values(X), alg.values(T)) + factor * 1.5 * alg.derivative_values(X))

    rep = af.check_user_action(alg.bracket, alg.pairing, action, 4, 1.5)
    assert not rep.passed
    assert "central-cocycle" in rep.finding_kinds
    assert rep.ratio == pytest.approx(factor, rel=1e-10)


# -------------------------------------------------------- classification
def _spokes(M=64, a=0.35):
    # invented scenario: the connection read around the rim of a toy gauge-field wheel
    g = af.Loop.exponential(af.SU2, {1: ([0.4, 0, 0.1], [0, 0.3, 0]), 2: ([0, 0.2, 0], [0.1, 0, 0])}, M)
    return af.gauge_action(g, af.constant_connection(a, M), 1.0)


def test_classify_files_in_every_input_form(tmp_path):
    A = _spokes()
    np.save(tmp_path / "rim.npy", A)
    np.savetxt(tmp_path / "rim.csv", A, delimiter=",", header="e1,e2,e3")
    (tmp_path / "rim.py").write_text(
        "import numpy as np\nc = 1.0\ndef A(t):\n    return np.stack([0 * t, 0 * t, 0.35 + 0 * t], axis=-1)\n"
    )
    for name, c in (("rim.npy", 1.0), ("rim.csv", 1.0), ("rim.py", None)):
        d = af.classify_file(tmp_path / name, c, M=64)
        # affine.md: trace 2 cos(pi a / c) is a gauge invariant
        assert d["trace"].real == pytest.approx(2 * np.cos(0.35 * np.pi), abs=1e-12)
        assert d["a"] == pytest.approx(0.35, abs=1e-12)
        assert d["class"] == "regular" and d["stabilizer_dim"] == 1 and d["agree"]
    text = af.format_classification(d)
    assert "constant on orbit" in text and "rotation angle" in text


def test_classify_central_holonomy():
    d = af.classify(af.gauge_action(af.Loop.winding(af.SU2, 2, 32), af.constant_connection(1.0, 32), 1.0), 1.0)
    # a = 1 + 2 = 3 at c = 1: Hol = -I, stabilizer 3-dimensional, representative a/c = 1
    assert d["class"] == "central -I" and d["stabilizer_dim"] == 3 and d["stabilizer_dim_fourier"] == 3
    assert d["a_over_c"] == pytest.approx(1.0, abs=1e-12)


def test_bad_connection_files_give_one_clear_message(tmp_path):
    np.save(tmp_path / "two.npy", np.zeros((16, 2)))
    with pytest.raises(UsageError, match=r"shape \(M, 3\)"):
        af.classify_file(tmp_path / "two.npy", 1.0)
    np.save(tmp_path / "ok.npy", np.zeros((16, 3)))
    with pytest.raises(UsageError, match="no level"):
        af.classify_file(tmp_path / "ok.npy")
    with pytest.raises(UsageError, match="nonzero"):
        af.holonomy(np.zeros((16, 3)), 0.0)
    with pytest.raises(UsageError, match="complex"):
        af.holonomy(np.zeros((16, 3), complex), 1.0)


def test_cli_holonomy_command(tmp_path, capsys):
    from hamcheck.cli import main

    np.save(tmp_path / "rim.npy", _spokes())
    assert main(["holonomy", str(tmp_path / "rim.npy"), "--c", "1"]) == 0
    out = capsys.readouterr().out
    assert "regular" in out and "a = 0.35" in out
    assert main(["holonomy", str(tmp_path / "rim.npy"), "--c", "1", "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["stabilizer_dim"] == 1
    assert main(["holonomy", str(tmp_path / "rim.npy")]) == 2
