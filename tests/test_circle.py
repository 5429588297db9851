"""Tests of hamcheck.circle: grids, spectral derivatives, quadrature, file input, resolution studies."""

import jax.numpy as jnp
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import hamcheck
from hamcheck import circle

# round-off of FFT-based identities on grids up to 256 points (float64)
SPECTRAL_RTOL = 1e-12


def trig(theta):
    return 0.7 + np.cos(2 * theta) - 0.4 * np.sin(5 * theta)


def trig_d1(theta):
    return -2 * np.sin(2 * theta) - 2.0 * np.cos(5 * theta)


def test_grid_and_wavenumbers():
    # common practice: theta_j = 2 pi j / M and numpy's FFT ordering
    assert circle.grid(4) == pytest.approx([0, np.pi / 2, np.pi, 3 * np.pi / 2], abs=0)
    assert circle.wavenumbers(5).tolist() == [0, 1, 2, -2, -1]
    with pytest.raises(hamcheck.UsageError, match="positive integer"):
        circle.grid(0)


@given(st.integers(min_value=12, max_value=64), st.integers(min_value=1, max_value=3), st.booleans())
@settings(max_examples=15, deadline=None)
def test_spectral_derivative_exact_for_trig_polynomials(M, order, as_jax):
    th = circle.grid(M)
    f = np.cos(3 * th + 0.2) + 0.5 * np.sin(5 * th)
    # d^p cos(n t + a) = n^p cos(n t + a + p pi/2) (from memory, calculus)
    want = 3**order * np.cos(3 * th + 0.2 + order * np.pi / 2) + 0.5 * 5**order * np.sin(5 * th + order * np.pi / 2)
    # numpy input stays numpy; jax input goes through jax.numpy (a few shapes only: each compiles)
    f_in = jnp.asarray(f) if as_jax and M in (16, 32) else f
    got = np.asarray(circle.derivative(f_in, order))
    assert got == pytest.approx(want, abs=SPECTRAL_RTOL * 5**order * M)


def test_derivative_of_matrix_valued_loop_and_complex():
    th = circle.grid(32)
    g = np.stack([np.cos(th), np.sin(th), -np.sin(th), np.cos(th)], axis=1).reshape(32, 2, 2)
    dg = np.asarray(circle.derivative(jnp.asarray(g)))  # the jax path (used inside models)
    want = np.stack([-np.sin(th), np.cos(th), -np.cos(th), -np.sin(th)], axis=1).reshape(32, 2, 2)
    assert dg == pytest.approx(want, abs=1e-13)
    z = np.exp(3j * th)
    assert np.asarray(circle.derivative(z)) == pytest.approx(3j * z, abs=1e-12)


def test_trapezoid_quadrature_exact_and_negative_control():
    th = circle.grid(16)
    # int_0^{2pi} cos^2(3 t) dt = pi (from memory)
    assert float(circle.integrate(np.cos(3 * th) ** 2)) == pytest.approx(np.pi, rel=1e-14)
    # negative control: mode 16 aliases to 0 on a 16-point grid, the rule is no longer exact
    assert float(circle.integrate(np.cos(16 * th))) != pytest.approx(0.0, abs=1.0)


def test_periodic_evaluation_derivatives_and_on_grid():
    p = circle.Periodic.from_samples(trig(circle.grid(16)))
    x = np.array([0.1, 1.3, 4.0])
    assert p(x) == pytest.approx(trig(x), abs=1e-14)
    assert p(x, 1) == pytest.approx(trig_d1(x), abs=1e-13)
    shifted = circle.grid(40) + 0.37
    assert p.on_grid(40, 0.37) == pytest.approx(trig(shifted), abs=1e-13)
    assert p.derivative().on_grid(40) == pytest.approx(trig_d1(circle.grid(40)), abs=1e-13)
    assert p.integral() == pytest.approx(2 * np.pi * 0.7, rel=1e-14)
    a0, a, b = p.real_coefficients()
    assert a0 == pytest.approx(0.7) and a[1] == pytest.approx(1.0) and b[4] == pytest.approx(-0.4)


def test_periodic_from_real_modes_matches_formula_and_trim():
    p = circle.Periodic.from_real_modes([1, 3], a=[0.5, 0.0], b=[0.0, 2.0], a0=1.0)
    x = np.linspace(0, 6, 7)
    assert p(x) == pytest.approx(1 + 0.5 * np.cos(x) + 2 * np.sin(3 * x), abs=1e-14)
    noisy = circle.Periodic.from_samples(trig(circle.grid(64)))
    assert noisy.degree == 32 and noisy.trimmed().degree == 5


def test_mode_vectors_round_trip():
    v = np.array([0.3, 1.0, -2.0, 0.0, 0.5])
    f = np.asarray(circle.mode_vector_to_samples(v, 12))
    th = circle.grid(12)
    assert f == pytest.approx(0.3 + np.cos(th) - 2 * np.sin(th) + 0.5 * np.sin(2 * th), abs=1e-14)
    assert circle.samples_to_mode_vector(f, 2) == pytest.approx(v, abs=1e-14)
    assert circle.vector_modes(2).tolist() == [0, 1, 1, 2, 2]
    with pytest.raises(hamcheck.UsageError, match="cannot resolve"):
        circle.samples_to_mode_vector(f, 6)


def test_spectral_tail_flags_under_resolved_samples():
    smooth = np.exp(np.cos(circle.grid(64)))
    rough = np.exp(8 * np.cos(circle.grid(16)))
    assert circle.spectral_tail(smooth) < 1e-14
    assert circle.spectral_tail(rough) > 1e-3  # negative control: under-resolved


def test_resample_is_the_interpolant():
    f = trig(circle.grid(12))
    assert circle.resample(f, 30) == pytest.approx(trig(circle.grid(30)), abs=1e-13)


# --------------------------------------------------------------- file input
def test_load_npy_csv_py(tmp_path):
    th = circle.grid(8)
    np.save(tmp_path / "a.npy", np.cos(th))
    (tmp_path / "b.csv").write_text("T\n" + "\n".join(repr(float(v)) for v in np.cos(th)))
    (tmp_path / "c.py").write_text("import numpy as np\nc = 3\ndef T(t):\n    return np.cos(t)\n")
    (tmp_path / "m.csv").write_text("\n".join(f"{v},{2*v},{3*v}" for v in np.cos(th)))
    a = circle.load_periodic_samples(tmp_path / "a.npy")
    b = circle.load_periodic_samples(tmp_path / "b.csv")
    c = circle.load_periodic_samples(tmp_path / "c.py", M=8)
    m = circle.load_periodic_samples(tmp_path / "m.csv", "A", value_shape=(3,))
    assert a.values == pytest.approx(np.cos(th)) and b.values == pytest.approx(np.cos(th))
    assert c.values == pytest.approx(np.cos(th)) and c.params == {"c": 3.0} and c.kind == "py-callable"
    assert m.values.shape == (8, 3)


def test_load_errors_are_one_clear_message(tmp_path):
    with pytest.raises(hamcheck.UsageError, match="no such file"):
        circle.load_periodic_samples(tmp_path / "missing.npy")
    (tmp_path / "x.txt2").write_text("1")
    with pytest.raises(hamcheck.UsageError, match="unsupported file type"):
        circle.load_periodic_samples(tmp_path / "x.txt2")
    (tmp_path / "n.py").write_text("c = 1\n")
    with pytest.raises(hamcheck.UsageError, match="does not define 'T'"):
        circle.load_periodic_samples(tmp_path / "n.py")
    np.save(tmp_path / "bad.npy", np.array([1.0, np.nan, 2.0, 3.0]))
    with pytest.raises(hamcheck.UsageError, match="sample 1 .* NaN"):
        circle.load_periodic_samples(tmp_path / "bad.npy")
    (tmp_path / "m.csv").write_text("1,2\n3,4\n5,6\n")
    with pytest.raises(hamcheck.UsageError, match=r"should have shape \(3,\)"):
        circle.load_periodic_samples(tmp_path / "m.csv", value_shape=(3,))


# --------------------------------------------------------- resolution studies
def test_fit_decay_recovers_rates():
    n = np.array([4, 8, 12, 16])
    geo = circle.fit_decay(n, 3.0 * 0.5**n)
    alg = circle.fit_decay(n, 2.0 * n**-3.0)
    assert geo["best"] == "geometric" and geo["geometric"]["rate"] == pytest.approx(0.5, rel=1e-10)
    assert alg["best"] == "algebraic" and alg["algebraic"]["power"] == pytest.approx(3.0, rel=1e-10)


def test_resolution_study_verdicts_and_plot(tmp_path):
    # trapezoid error for exp(cos t) falls geometrically (common practice: spectral accuracy)
    exact = 2 * np.pi * 1.2660658777520082  # 2 pi I_0(1), from memory (scipy.special.i0(1))
    study = circle.resolution_study(lambda M: abs(float(circle.integrate(np.exp(np.cos(circle.grid(M))))) - exact) / exact, [2, 4, 6, 8, 16])
    assert study.verdict == "converges"
    stall = circle.resolution_study(lambda M: 0.02 + 1e-3 / M, [8, 16, 32])
    assert stall.verdict == "stalls" and "construction" in stall.message  # negative control
    path = study.plot(tmp_path / "r.png")
    assert (tmp_path / "r.png").stat().st_size > 1000 and path.endswith("r.png")
    assert "verdict" in study.table()
    with pytest.raises(hamcheck.UsageError, match="strictly increasing"):
        circle.resolution_study(lambda n: 1.0, [4, 2])


# ------------------------------------------------------------- propagator
def test_propagator_matches_dop853_has_order_six_and_raises_when_it_cannot_converge():
    # psi'' + q psi = 0 with q = 0.4 + 0.3 cos t; independent oracle: scipy's DOP853 (common practice)
    from scipy.integrate import solve_ivp

    q = circle.Periodic.from_real_modes([1], [0.3], [0.0], a0=0.4)
    co = np.zeros((3, 2, 2), complex)
    co[:, 1, 0] = -q.coefficients
    co[0, 0, 1] = 1.0
    gen = circle.Periodic(co, q.wavenumbers, True)
    P = circle.propagate(gen, expm=circle.expm_traceless2)
    rhs = lambda t, y: (np.array([[0, 1], [-float(q(np.array([t]))[0]), 0]]) @ y.reshape(2, 2)).ravel()  # noqa: E731
    ref = solve_ivp(rhs, (0, 2 * np.pi), np.eye(2).ravel(), method="DOP853", rtol=1e-13, atol=1e-14).y[:, -1].reshape(2, 2)
    assert P.matrix == pytest.approx(ref, abs=1e-10) and P.error <= circle.TOLERANCES.propagator
    # the generic exponential (scipy's expm) gives the same matrix
    assert circle.propagate(gen).matrix == pytest.approx(P.matrix, abs=1e-13)
    # sixth order (Blanes, Casas, Oteo, Ros 2009, from memory): halving the step divides the error by ~64
    e = [np.abs(circle.transport(gen, N, circle.expm_traceless2) - P.matrix).max() for N in (16, 32)]
    assert 40 < e[0] / e[1] < 90
    # the fundamental solution ends at the monodromy and starts at I
    F = P.fundamental()
    assert F.shape == (P.steps + 1, 2, 2) and F[0] == pytest.approx(np.eye(2)) and F[-1] == pytest.approx(P.matrix, abs=1e-13)
    # negative control: a step budget that cannot reach the target raises, naming what to change
    with pytest.raises(hamcheck.ConvergenceError, match="raise max_steps or tol"):
        circle.propagate(gen, expm=circle.expm_traceless2, min_steps=4, max_steps=16)
    with pytest.raises(hamcheck.UsageError, match="square-matrix values"):
        circle.propagate(q)


def test_kernel_threshold_and_subspace_distance():
    # one threshold: relative singular values at or below TOLERANCES.stabilizer are kernel directions
    k = circle.kernel(np.diag([1.0, 0.5, 0.5 * circle.TOLERANCES.stabilizer, 1e-6]))
    assert k.dim == 1 and abs(k.basis[0, 2]) == pytest.approx(1.0)
    # the propagated matrix's error widens the threshold (never decided finer than the data)
    assert circle.kernel(np.diag([1.0, 1e-7]), error=1e-9).dim == 1
    assert circle.kernel(np.diag([1.0, 1e-7])).dim == 0  # negative control
    # a wide matrix has a kernel of at least (columns - rows)
    assert circle.kernel(np.ones((1, 3))).dim == 2
    # principal angles: the same span at any basis, inf for different dimensions
    A = np.array([[1.0, 0, 0], [0, 1.0, 0]])
    assert circle.subspace_distance(A, np.array([[1.0, 1.0, 0], [1.0, -1.0, 0]])) < 1e-15
    assert circle.subspace_distance(A, A[:1]) == float("inf")
    assert circle.subspace_distance(A, np.array([[1.0, 0, 0], [0, 0, 1.0]])) == pytest.approx(1.0)


def test_check_resolution_study_rejects_checks_without_an_upper_tolerance():
    with pytest.raises(hamcheck.UsageError, match="subset"):
        circle.check_resolution_study(lambda M: None, [8, 16], checks=("nondegenerate",))
    # closedness alone never verifies a form (the moment checks did not run)
    only_closed = circle.summarize_resolution([8, 16], {"closed": [1e-3, 1e-16]})
    assert not only_closed.verified and "NOT verified" in only_closed.verdict
