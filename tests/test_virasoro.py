"""Tests of hamcheck.virasoro against shared/reference/virasoro.md, scipy, mpmath and sympy."""

import functools
import json
import math
import warnings

import jax
import jax.numpy as jnp
import mpmath
import numpy as np
import pytest
import sympy
from scipy.integrate import solve_ivp

import hamcheck
from hamcheck import circle, virasoro
from hamcheck.cli import main

# The monodromy is computed to MONODROMY_TOL ~ 1e-12 relative; comparisons with an
# independent ODE solver (DOP853 at rtol 1e-13) carry that solver's own error too.
ODE_ABS = 1e-10
# invariants of Phi_F T on a 256-point grid: interpolation of an analytic potential
# resolved to round-off (spectral tail < 1e-15) plus the monodromy's error
INVARIANCE_ABS = 1e-10


def potential():
    """A smooth non-constant potential (invented: the tidal load on a ring station)."""
    return circle.Periodic.from_real_modes([1, 2, 3], [0.2, -0.1, 0.05], [0.1, 0.0, -0.07], a0=0.4)


def dop853_monodromy(T, c):
    """Independent oracle: scipy's DOP853 on Y' = [[0, 1], [-T/c, 0]] Y (virasoro.md)."""

    def rhs(t, y):
        q = float(T(np.array([t]))[0]) / c
        Y = y.reshape(2, 2)
        return np.array([[0.0, 1.0], [-q, 0.0]]) @ Y

    sol = solve_ivp(lambda t, y: rhs(t, y).ravel(), (0, 2 * np.pi), np.eye(2).ravel(), method="DOP853", rtol=1e-13, atol=1e-14)
    return sol.y[:, -1].reshape(2, 2)


# ------------------------------------------------------------ local formulas
def test_schwarzian_matches_sympy():
    # sympy oracle for S(F) = F'''/F' - (3/2)(F''/F')^2 (virasoro.md)
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
    # virasoro.md: Phi_G(Phi_F T) = Phi_{F o G} T (a right action)
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
    # virasoro.md: delta_X T = d/dt Phi_{theta + tX} T at t = 0; central differences, error ~h^2 ~ 1e-10
    c, M, h = 0.8, 64, 1e-5
    T = potential()
    X = virasoro.Diffeo.from_real_modes([1, 3], [0.3, 0.0], [0.0, -0.2]).displacement
    plus = virasoro.transform(T, c, virasoro.Diffeo(circle.Periodic(h * X.coefficients, X.wavenumbers)), M=M)
    minus = virasoro.transform(T, c, virasoro.Diffeo(circle.Periodic(-h * X.coefficients, X.wavenumbers)), M=M)
    fd = (plus - minus) / (2 * h)
    got = np.asarray(virasoro.delta(X.on_grid(M), T.on_grid(M), c))
    assert got == pytest.approx(fd, abs=1e-8)


def test_key_identity_and_gelfand_fuchs_modes():
    # virasoro.md: <delta_X T, Y> = <T, [X, Y]> + c GF(X, Y); GF(cos m, sin m) = pi m^3 / 2
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


# ------------------------------------------------------------------ monodromy
@pytest.mark.parametrize(
    "T0,c",
    [(0.09, 1.0), (2.0, 0.5), (-0.3, 1.0), (0.0, 1.0), (0.6, -1.5), (1.0, 1.0), (0.25, 1.0), (2.25, 1.0)],
)
def test_monodromy_traces_of_constants(T0, c):
    # virasoro.md: trace 2cos(2 pi k), 2cosh(2 pi sqrt(-T0/c)), 2 at 0; (-1)^n I at c n^2/4
    m = virasoro.monodromy(T0, c)
    r = T0 / c
    want = 2 * np.cos(2 * np.pi * np.sqrt(r)) if r > 0 else (2 * np.cosh(2 * np.pi * np.sqrt(-r)) if r < 0 else 2.0)
    assert m.trace == pytest.approx(want, abs=1e-12 * max(1, abs(want)))
    n = 2 * np.sqrt(r) if r > 0 else 0.5
    if abs(n - round(n)) < 1e-12:
        assert m.matrix == pytest.approx((-1) ** round(n) * np.eye(2), abs=1e-12)


def test_monodromy_matches_dop853_and_has_order_six():
    T, c = potential(), 1.3
    ref = dop853_monodromy(T, c)
    m = virasoro.monodromy(T, c)
    assert m.matrix == pytest.approx(ref, abs=ODE_ABS)
    assert m.error < 1e-11
    # the Magnus scheme's order: errors fall ~2^6 = 64 per doubling (Blanes et al. 2009)
    q = m.q
    e = [np.abs(virasoro._product(virasoro._step_matrices(q, N)) - m.matrix).max() for N in (32, 64)]
    assert 40 < e[0] / e[1] < 90


def test_rotation_number_of_constants_and_k_versus_one_minus_k():
    # virasoro.md: rho = sqrt(T0/c); k and 1 - k share the trace but not rho
    for k in (0.3, 0.7, 1.2, 2.6):
        inv = virasoro.classify(k * k, 1.0)
        assert inv["rotation_number"] == pytest.approx(k, abs=1e-10)
    a, b = virasoro.classify(0.09, 1.0), virasoro.classify(0.49, 1.0)
    assert a["trace"] == pytest.approx(b["trace"], abs=1e-12)
    assert a["rotation_number"] != pytest.approx(b["rotation_number"], abs=0.1)
    assert virasoro.classify(-0.3, 1.0)["rotation_number"] == 0.0


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_trace_and_rotation_number_invariant_under_diffeomorphisms(seed):
    # virasoro.md: the trace is invariant under Phi_F; so is the rotation number
    c, T = 1.0, potential()
    base = virasoro.classify(T, c)
    F = virasoro.Diffeo.random(np.random.default_rng(seed), modes=(1, 2, 3), strength=0.5)
    TF = virasoro.transform(T, c, F, M=256)
    assert circle.spectral_tail(TF) < 1e-14
    moved = virasoro.classify(TF, c)
    assert moved["trace"] == pytest.approx(base["trace"], abs=INVARIANCE_ABS)
    assert moved["rotation_number"] == pytest.approx(base["rotation_number"], abs=INVARIANCE_ABS)
    assert moved["class"] == base["class"]


# ---------------------------------------------------------------- stabilizers
@pytest.mark.parametrize("T0,c,dim", [(0.25, 1.0, 3), (1.0, 1.0, 3), (4.5, 2.0, 3), (0.3, 1.0, 1), (0.0, 1.0, 1), (-0.4, 1.0, 1), (0.5, -2.0, 1)])
def test_stabilizer_dims_of_constants_two_ways(T0, c, dim):
    # virasoro.md: dimension 3 exactly at T0 = c n^2/4 (n >= 1), else 1 (T0 = 0 and T0/c < 0 included)
    inv = virasoro.classify(T0, c)
    assert inv["stabilizer_dim"] == dim
    assert inv["stabilizer_dim_fourier"] == dim
    assert inv["stabilizer_agreement"] < 1e-10


def test_sl2_stabilizer_at_c_over_4():
    # virasoro.md: at T0 = c/4 the stabilizer is span{1, cos, sin} = sl(2, R)
    m = virasoro.monodromy(0.5, 2.0, min_steps=64)
    dim, B = virasoro.stabilizer_ode(m, M=64)
    th = circle.grid(64)
    target = np.stack([np.ones(64), np.cos(th), np.sin(th)])
    assert dim == 3
    assert virasoro._subspace_distance(B, target) < 1e-10
    # negative control of the comparison: span{1, cos 2, sin 2} is another subspace
    other = np.stack([np.ones(64), np.cos(2 * th), np.sin(2 * th)])
    assert virasoro._subspace_distance(B, other) > 0.5


def test_stabilizer_of_non_constant_potential_two_ways():
    inv = virasoro.classify(potential(), 1.3)
    assert inv["stabilizer_dim"] == inv["stabilizer_dim_fourier"] == 1
    assert inv["stabilizer_agreement"] < 1e-9


# ------------------------------------------------------ constant representative
@pytest.mark.parametrize("T0", [0.09, 0.49, -0.3, 0.0, 1.0, 2.25])
def test_constant_representative_recovered_from_a_moved_constant(T0):
    # Phi_F T0 lies on the orbit of T0, so the classifier must return T0 (virasoro.md orbit facts)
    c = 1.0
    F = virasoro.Diffeo.random(np.random.default_rng(7), modes=(1, 2), strength=0.4)
    inv = virasoro.classify(virasoro.transform(T0, c, F, M=256), c)
    assert inv["constant_representative"] == pytest.approx(T0, abs=1e-9)


def test_no_constant_on_hyperbolic_orbits_with_winding():
    # hyperbolic monodromy with rotation number 1/2 (a potential well below n = 1 resonance): no constant
    # T = 1/4 + 0.6 cos(theta): parametric resonance at k = 1/2 (from memory: the first instability
    # tongue of Hill's equation), monodromy hyperbolic with negative eigenvalues
    q = circle.Periodic.from_real_modes([1], [0.6], [0.0], a0=0.25)
    inv = virasoro.classify(q, 1.0)
    assert inv["class"] == "hyperbolic" and inv["rotation_number"] == 0.5
    assert inv["constant_representative"] is None


# ---------------------------------------------------------- projective structures
def test_potential_of_developing_map_has_the_class_of_its_monodromy():
    # f = exp(lam theta) -> f(theta + 2pi) = e^{2 pi lam} f: hyperbolic, |trace| = 2 cosh(pi lam) (virasoro.md)
    lam, c = 0.3, 1.0
    T = virasoro.potential_from_developing_map(lambda t: jnp.exp(lam * t + 0.2 * jnp.sin(t)), c, 64)
    inv = virasoro.classify(T, c)
    assert inv["class"] == "hyperbolic"
    assert abs(inv["trace"]) == pytest.approx(2 * np.cosh(np.pi * lam), rel=1e-11)


def test_developing_map_from_T_is_a_moebius_image_of_the_original():
    # T = (c/2) S(tan(phi)), phi = rho theta + eps sin theta; the recovered f is g o tan(phi) for a Moebius g,
    # so cross-ratios agree (from memory: cross-ratio is the Moebius invariant)
    rho, eps, c, M = 0.35, 0.1, 1.0, 64
    G = virasoro.Diffeo.from_real_modes([1], [0.0], [eps / rho])
    T = virasoro.transform(c * rho**2, c, G, M=M)
    dev = virasoro.developing_map(T, c, M)
    th = circle.grid(M)
    f_true = np.tan(rho * th + eps * np.sin(th))
    f_dev = np.tan(dev["angle"])

    def cross(z, i):
        a, b, cc, d = z[i]
        return (a - cc) * (b - d) / ((a - d) * (b - cc))

    for idx in ([3, 9, 17, 30], [5, 12, 40, 50]):
        assert cross(f_dev, idx) == pytest.approx(cross(f_true, idx), rel=1e-9)
    assert np.trace(dev["mobius"]) == pytest.approx(2 * np.cos(2 * np.pi * rho), abs=1e-10)


# ---------------------------------------------------------------- orbit models
@functools.cache
def chart():
    return virasoro.orbit_model(0.1, 1.0, [1, 2])


def test_orbit_model_passes_every_check():
    report = hamcheck.check(chart(), points=3, settings=hamcheck.Settings(search_starts=0))
    assert report.passed, str(report)
    for name in ("closed", "moment_map", "antisymmetric", "equivariance", "group_equivariance"):
        assert report.results[name].status == "pass"


def test_kks_mode_formula_at_the_base_point():
    # virasoro.md: omega(cos m, sin m) = 2 pi / (m (c m^2 - 4 T0)) for tangent vectors at T0.
    # Chart directions d/da_m, d/db_m map to delta_{cos} T0 = (m/2)(c m^2 - 4T0) sin and
    # delta_{sin} T0 = -(m/2)(c m^2 - 4T0) cos, hence omega(d/da, d/db) = pi m (c m^2 - 4T0)/2.
    model = chart()
    W = np.asarray(model.form(jnp.zeros(model.dim)))
    T0, c = 0.1, 1.0
    for i, m in enumerate([1, 2]):
        lam = m * (c * m * m - 4 * T0) / 2
        tangent_value = W[2 * i, 2 * i + 1] / lam**2  # omega(sin/lam, -cos/lam) -> omega(cos, sin)
        assert tangent_value == pytest.approx(2 * np.pi / (m * (c * m * m - 4 * T0)), rel=1e-13)
    assert virasoro.base_form_check(model).status == "pass"
    assert np.abs(W[0, 2:]).max() < 1e-13  # different m do not pair


def test_negative_controls_caught_by_named_checks():
    S = virasoro.schwarzian_from_derivatives
    only = ["closed"]
    # F' instead of F'^2 -> closed (virasoro.md: residuals 2e-2 to 1)
    m1 = virasoro.orbit_model(0.1, 1.0, [1, 2], grid=48, transform=lambda T0F, F1, F2, F3, c: T0F * F1 + 0.5 * c * S(F1, F2, F3))
    r1 = hamcheck.check(m1, points=2, only=only).results["closed"]
    assert r1.status == "fail" and r1.residual > 1e-4
    # missing 1/F' in the tangent map -> closed
    m2 = virasoro.orbit_model(0.1, 1.0, [1, 2], grid=48, tangent=lambda dF, F1: dF)
    r2 = hamcheck.check(m2, points=2, only=only).results["closed"]
    assert r2.status == "fail" and r2.residual > 1e-4
    # wrong Schwarzian coefficient (c/12): another valid orbit, caught by kks_base_form
    m3 = virasoro.orbit_model(0.1, 1.0, [1, 2], grid=48, transform=lambda T0F, F1, F2, F3, c: T0F * F1**2 + c / 12 * S(F1, F2, F3))
    assert virasoro.base_form_check(m3).status == "fail"
    # opposite bracket sign: caught by the cocycle check's action (test_cocycles has the details)
    alg = virasoro.truncated_algebra(6, 1.0)
    rep = virasoro.check_user_action(lambda X, Y: -alg.bracket(X, Y), alg.pairing, alg.action, 6, 1.0)
    assert rep.results["action"].status == "fail" and "bracket-sign" in rep.finding_kinds
    rep12 = virasoro.check_user_action(alg.bracket, alg.pairing, virasoro.TruncatedVirasoro(6, 1.0, 1 / 12).action, 6, 1.0)
    assert rep12.results["central-ratio"].status == "fail" and rep12.ratio == pytest.approx(1 / 6, rel=1e-10)


def test_degenerate_mode_warns_and_names_the_mode():
    # virasoro.md: a mode n with T0 = c n^2/4 makes omega degenerate at the base point
    with pytest.warns(UserWarning, match="Drop mode 1"):
        model = virasoro.orbit_model(0.25, 1.0, [1, 2], grid=64)
    s = np.linalg.svd(np.asarray(model.form(jnp.zeros(model.dim))), compute_uv=False)
    assert s[-1] < 1e-12 * s[0]
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        virasoro.orbit_model(0.25, 1.0, [2, 3], grid=64)  # starting at n = 2: no warning


def test_non_constant_base_potential_chart_is_closed():
    with pytest.warns(UserWarning, match="non-constant base potential"):
        model = virasoro.orbit_model(potential(), 1.0, [1, 2])
    rep = hamcheck.check(model, points=3, only=["antisymmetric", "closed"])
    assert rep.passed, str(rep)


def test_bad_arguments():
    with pytest.raises(hamcheck.UsageError, match="central charge"):
        virasoro.monodromy(1.0, 0.0)
    with pytest.raises(hamcheck.UsageError, match="distinct positive integers"):
        virasoro.orbit_model(0.1, 1.0, [0, 1])
    with pytest.raises(hamcheck.UsageError, match="cannot resolve mode"):
        virasoro.orbit_model(0.1, 1.0, [4], grid=8)


@pytest.mark.slow
def test_resolution_study_converges_and_a_wrong_chart_stalls(tmp_path):
    # virasoro.md: residuals fall geometrically with the quadrature grid; a wrong formula does not
    # antisymmetry (exact integration by parts) is the cheapest residual that sees the quadrature
    good = virasoro.chart_resolution_study(0.1, 1.0, [1, 2], [12, 24, 48], check="antisymmetric", points=2)
    assert good.verdict == "converges" and good.residuals[-1] < 1e-13
    bad = virasoro.chart_resolution_study(0.1, 1.0, [1, 2], [24, 48], check="antisymmetric", points=2, tangent=lambda dF, F1: dF)
    assert bad.verdict == "stalls"
    good.plot(tmp_path / "closed.png")
    assert (tmp_path / "closed.png").exists()


# ---------------------------------------------------------------- localization
def test_rotation_weights_at_the_sl2_point():
    # virasoro.md: weights n = 2, 3, ...; T0 = c/4 is a local maximum of int T for c > 0
    w, hess = virasoro.rotation_weights(1.0, 5)
    assert w == pytest.approx([2, 3, 4, 5], rel=1e-12)
    assert np.all(hess < 0)


def test_zeta_values_and_regularised_product():
    # virasoro.md / mpmath: zeta(0) - 1 = -3/2, -zeta'(0) = log sqrt(2 pi), prod = t^{3/2}/(2pi)^2 to 20 digits
    with mpmath.workdps(30):
        assert mpmath.zeta(0) - 1 == -1.5
        assert mpmath.almosteq(-mpmath.zeta(0, derivative=1), mpmath.log(mpmath.sqrt(2 * mpmath.pi)), 1e-25)
    for t in (0.5, 1.0, 3.0):
        reg, closed = virasoro.zeta_one_loop(t)
        assert mpmath.almosteq(reg, closed, 1e-20)


def test_counterterm_limit_with_error_one_over_12N():
    # virasoro.md: L_N(lam) -> -(3/2) log lam + (1/2) log 2pi with error 1/(12N) (Stirling, from memory:
    # next term -1/(360 N^3))
    for lam in (0.5, 2.0):
        for N in (50, 400):
            err = virasoro.counterterm_sum(lam, N) - virasoro.counterterm_limit(lam)
            assert err == pytest.approx(1 / (12 * N), abs=1 / (300 * N**3))
    # negative control: a plain cutoff (no counterterms) gives the wrong power
    plain = sum(math.log(2.0 * n) for n in range(2, 401))
    assert abs(plain - virasoro.counterterm_limit(2.0)) > 100


# ------------------------------------------------------------ command line
def test_classify_file_and_cli(tmp_path, capsys):
    th = circle.grid(128)
    np.save(tmp_path / "ring.npy", 0.3 + 0.1 * np.cos(th))
    (tmp_path / "hill.py").write_text("import numpy as np\nc = 4.0\ndef T(t):\n    return 1.0 + 0 * t\n")
    d = virasoro.classify_file(tmp_path / "hill.py")
    # T0/c = 1/4 = n^2/4 with n = 1: monodromy (-1)^1 I (virasoro.md)
    assert d["class"] == "-identity" and d["stabilizer_dim"] == 3
    assert d["constant_representative"] == pytest.approx(1.0, abs=1e-12)
    assert main(["classify", str(tmp_path / "ring.npy"), "--c", "1", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["class"] == "elliptic" and out["samples"] == 128
    assert main(["classify", str(tmp_path / "ring.npy")]) == 2
    assert "--c" in capsys.readouterr().err
    assert main(["classify", str(tmp_path / "hill.py")]) == 0
    assert "rotation number" in capsys.readouterr().out


def test_under_resolved_file_is_flagged(tmp_path):
    np.save(tmp_path / "rough.npy", np.exp(6 * np.cos(circle.grid(16))))
    d = virasoro.classify_file(tmp_path / "rough.npy", c=1.0)
    assert "under-resolved" in d["warning"]
