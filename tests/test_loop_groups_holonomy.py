"""Tests of hamcheck.loop_groups.holonomy: holonomy, its class, stabilizers two ways, classification, CLI.

References: docs/references.md, Loop groups (holonomy of constants, stabilizer dimensions), scipy's
DOP853 as an independent oracle for holonomies.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp

import hamcheck
from hamcheck import circle
from hamcheck import loop_groups as af
from hamcheck.errors import UsageError
from hamcheck.loop_groups.connections import _random_connection, _random_loop
from helpers import rel, spokes

GROUPS = [af.SU2, af.SO3, af.U1, af.SU(3)]


@pytest.mark.parametrize("a,c", [(0.3, 1.0), (1.0, 1.0), (2.0, 1.0), (0.45, 0.6), (-0.7, 1.1)])
def test_holonomy_of_constant_connections(a, c):
    # references.md, Loop groups: Hol(a e_3) = diag(e^{-i pi a/c}, e^{i pi a/c}), trace 2 cos(pi a / c)
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
    A = _random_connection(af.SU2, rng, M, modes=4)
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
    assert H.error <= af.TOLERANCES.holonomy


def test_holonomy_integrator_is_sixth_order():
    # the Magnus scheme's order (Blanes et al., from memory): halving the step divides the error by ~64
    rng = np.random.default_rng(2)
    A = _random_connection(af.SU2, rng, 32, modes=4)
    Am = af.SU2.element(A)
    ref = af.holonomy(A, 0.7, tol=1e-14).matrix
    gen = circle.Periodic.from_samples(Am / 0.7)
    errs = [np.abs(circle.transport(gen, N, af.SU2.exp) - ref).max() for N in (64, 128)]
    assert 40 < errs[0] / errs[1] < 90


@pytest.mark.parametrize("group", GROUPS, ids=lambda g: g.name)
def test_holonomy_conjugates_under_gauge_transformations(group):
    # references.md, Loop groups: Hol(g.A) = g(0) Hol(A) g(0)^-1 (1.5e-14 there)
    rng = np.random.default_rng(7)
    M, c = 64, 1.2
    A = _random_connection(group, rng, M)
    g = _random_loop(group, rng, M)
    H = af.holonomy(A, c, group).matrix
    Hg = af.holonomy(af.gauge_action(g, A, c), c, group).matrix
    assert rel(Hg, group.conj(g.values[0], H)) <= 1e-12


def test_u1_holonomy_is_the_exponential_of_the_integral():
    # abelian case (from memory): Hol = exp((1/c) int A e dtheta)
    rng = np.random.default_rng(8)
    A = _random_connection(af.U1, rng, 32)
    c = 0.9
    H = af.holonomy(A, c, af.U1).matrix[0, 0]
    assert H == pytest.approx(np.exp(-0.5j * A[:, 0].mean() * 2 * np.pi / c), rel=1e-13)


# ----------------------------------------------------------- stabilizers
@pytest.mark.parametrize("a,c,dim", [(0.3, 1.0, 1), (1.0, 1.0, 3), (2.0, 1.0, 3), (1.2, 0.6, 3), (0.0, 1.0, 3), (0.999, 1.0, 1), (1.5, 1.0, 1)])
def test_stabilizer_dimensions_of_constants_two_ways(a, c, dim):
    # references.md, Loop groups: dimension 1 unless a/c is an integer, then 3 (central holonomy)
    A = af.constant_connection(a, 24)
    assert af.stabilizer_dimension_fourier(A, c)["dimension"] == dim
    assert af.stabilizer_dimension_transport(A, c)["dimension"] == dim


def test_stabilizer_dimension_is_gauge_invariant():
    # references.md, Loop groups: unchanged under gauge transformation; the Fourier kernel needs enough modes
    rng = np.random.default_rng(9)
    M = 64
    g = _random_loop(af.SU2, rng, M, scale=0.3)
    for a, dim in ((2.0, 3), (0.6, 1)):
        A = af.gauge_action(g, af.constant_connection(a, M), 1.0)
        assert af.stabilizer_dimension_transport(A, 1.0)["dimension"] == dim
        assert af.stabilizer_dimension_fourier(A, 1.0, modes=24)["dimension"] == dim


@settings(max_examples=8, deadline=None)
@given(st.floats(0.02, 0.98), st.integers(0, 2), st.sampled_from([0.5, 1.0, 2.5]))
def test_non_integer_levels_have_one_dimensional_stabilizers(frac, n, c):
    # references.md, Loop groups: a/c not an integer -> dimension 1 (both ways)
    A = af.constant_connection((n + frac) * c, 16)
    assert af.stabilizer_dimension_transport(A, c)["dimension"] == 1
    assert af.stabilizer_dimension_fourier(A, c)["dimension"] == 1


def test_classify_files_in_every_input_form(tmp_path):
    A = spokes()
    np.save(tmp_path / "rim.npy", A)
    np.savetxt(tmp_path / "rim.csv", A, delimiter=",", header="e1,e2,e3")
    (tmp_path / "rim.py").write_text(
        "import numpy as np\nc = 1.0\ndef A(t):\n    return np.stack([0 * t, 0 * t, 0.35 + 0 * t], axis=-1)\n"
    )
    for name, c in (("rim.npy", 1.0), ("rim.csv", 1.0), ("rim.py", None)):
        d = af.classify_file(tmp_path / name, c, M=64)
        # references.md, Loop groups: trace 2 cos(pi a / c) is a gauge invariant
        assert d.trace.real == pytest.approx(2 * np.cos(0.35 * np.pi), abs=1e-12)
        assert d.representative == pytest.approx(0.35, abs=1e-12)
        assert d.orbit_class == "regular" and d.stabilizer_dim == 1 and d.stabilizers_agree
    text = af.format_classification(d)
    assert "constant on orbit" in text and "rotation angle" in text


def test_classify_central_holonomy():
    d = af.classify(af.gauge_action(af.Loop.winding(af.SU2, 2, 32), af.constant_connection(1.0, 32), 1.0), 1.0)
    # a = 1 + 2 = 3 at c = 1: Hol = -I, stabilizer 3-dimensional, representative a/c = 1
    assert d.orbit_class == "central -I" and d.stabilizer_dim == 3 and d.stabilizer_dim_fourier == 3
    assert d.rotation_number == pytest.approx(1.0, abs=1e-12)


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

    np.save(tmp_path / "rim.npy", spokes())
    assert main(["holonomy", str(tmp_path / "rim.npy"), "--c", "1"]) == 0
    out = capsys.readouterr().out
    assert "regular" in out and "a = 0.35" in out
    assert main(["holonomy", str(tmp_path / "rim.npy"), "--c", "1", "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["stabilizer_dim"] == 1
    assert main(["holonomy", str(tmp_path / "rim.npy")]) == 2


def test_classification_is_a_report_and_round_trips_through_json(tmp_path, capsys):
    from hamcheck.cli import main

    d = af.classify(spokes(), 1.0)
    rep = d.report()
    assert isinstance(rep, hamcheck.Report) and rep.passed, str(rep)
    # the constant representative a e_3 has the measured trace 2 cos(pi a / c) (references.md, Loop groups)
    assert rep.results["constant_trace"].residual < 1e-12
    back = circle.OrbitClassification.from_dict(json.loads(d.to_json()))
    assert back.matrix == pytest.approx(d.matrix) and back.trace == d.trace and back.orbit_class == "regular"
    np.save(tmp_path / "rim.npy", spokes())
    assert main(["holonomy", str(tmp_path / "rim.npy"), "--c", "1", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["matrix_name"] == "holonomy" and out["checks"]["constant_trace"]["status"] == "pass"
    assert out["replay"].startswith("hamcheck holonomy")


def test_classification_flags_a_fourier_truncation_that_misses_the_stabilizer():
    # planted mistake: a gauge-transformed central connection with one Fourier mode: the kernel is not found
    g = _random_loop(af.SU2, np.random.default_rng(9), 64, scale=0.3)
    A = af.gauge_action(g, af.constant_connection(2.0, 64), 1.0)
    d = af.classify(A, 1.0, modes=1)
    assert d.stabilizer_dim == 3 and d.stabilizer_dim_fourier != 3 and not d.stabilizers_agree
    rep = d.report()
    assert rep.results["stabilizers_agree"].status == "fail"
    assert "transport" in " ".join(rep.explain().split())
