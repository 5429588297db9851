"""Tests of hamcheck.virasoro.hill: monodromy, class, rotation number, stabilizers, classification, CLI.

References: docs/references.md, Virasoro (values from memory, classical), scipy's DOP853 as an
independent oracle.
"""

import dataclasses
import json

import jax.numpy as jnp
import numpy as np
import pytest

import hamcheck
from hamcheck import circle, virasoro
from hamcheck.cli import main
from helpers import dop853_monodromy, potential

# The monodromy is computed to TOLERANCES.monodromy ~ 1e-12 relative; comparisons with an
# independent ODE solver (DOP853 at rtol 1e-13) carry that solver's own error too.
ODE_ABS = 1e-10
# invariants of Phi_F T on a 256-point grid: interpolation of an analytic potential
# resolved to round-off (spectral tail < 1e-15) plus the monodromy's error
INVARIANCE_ABS = 1e-10


@pytest.mark.parametrize(
    "T0,c",
    [(0.09, 1.0), (2.0, 0.5), (-0.3, 1.0), (0.0, 1.0), (0.6, -1.5), (1.0, 1.0), (0.25, 1.0), (2.25, 1.0)],
)
def test_monodromy_traces_of_constants(T0, c):
    # references.md, Virasoro: trace 2cos(2 pi k), 2cosh(2 pi sqrt(-T0/c)), 2 at 0; (-1)^n I at c n^2/4
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
    e = [np.abs(circle.transport(m.generator, N, circle.expm_traceless2) - m.matrix).max() for N in (32, 64)]
    assert 40 < e[0] / e[1] < 90


def test_rotation_number_of_constants_and_k_versus_one_minus_k():
    # references.md, Virasoro: rho = sqrt(T0/c); k and 1 - k share the trace but not rho
    for k in (0.3, 0.7, 1.2, 2.6):
        inv = virasoro.classify(k * k, 1.0)
        assert inv.rotation_number == pytest.approx(k, abs=1e-10)
    a, b = virasoro.classify(0.09, 1.0), virasoro.classify(0.49, 1.0)
    assert a.trace == pytest.approx(b.trace, abs=1e-12)
    assert a.rotation_number != pytest.approx(b.rotation_number, abs=0.1)
    assert virasoro.classify(-0.3, 1.0).rotation_number == 0.0


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_trace_and_rotation_number_invariant_under_diffeomorphisms(seed):
    # references.md, Virasoro: the trace is invariant under Phi_F; so is the rotation number
    c, T = 1.0, potential()
    base = virasoro.classify(T, c)
    F = virasoro.Diffeo.random(np.random.default_rng(seed), modes=(1, 2, 3), strength=0.5)
    TF = virasoro.transform(T, c, F, M=256)
    assert circle.spectral_tail(TF) < 1e-14
    moved = virasoro.classify(TF, c)
    assert moved.trace == pytest.approx(base.trace, abs=INVARIANCE_ABS)
    assert moved.rotation_number == pytest.approx(base.rotation_number, abs=INVARIANCE_ABS)
    assert moved.orbit_class == base.orbit_class


# ---------------------------------------------------------------- stabilizers
@pytest.mark.parametrize("T0,c,dim", [(0.25, 1.0, 3), (1.0, 1.0, 3), (4.5, 2.0, 3), (0.3, 1.0, 1), (0.0, 1.0, 1), (-0.4, 1.0, 1), (0.5, -2.0, 1)])
def test_stabilizer_dims_of_constants_two_ways(T0, c, dim):
    # references.md, Virasoro: dimension 3 exactly at T0 = c n^2/4 (n >= 1), else 1 (T0 = 0 and T0/c < 0 included)
    inv = virasoro.classify(T0, c)
    assert inv.stabilizer_dim == dim
    assert inv.stabilizer_dim_fourier == dim
    assert inv.stabilizer_agreement < 1e-10


def test_sl2_stabilizer_at_c_over_4():
    # references.md, Virasoro: at T0 = c/4 the stabilizer is span{1, cos, sin} = sl(2, R)
    m = virasoro.monodromy(0.5, 2.0, min_steps=64)
    dim, B = virasoro.stabilizer_ode(m, M=64)
    th = circle.grid(64)
    target = np.stack([np.ones(64), np.cos(th), np.sin(th)])
    assert dim == 3
    assert circle.subspace_distance(B, target) < 1e-10
    # negative control of the comparison: span{1, cos 2, sin 2} is another subspace
    other = np.stack([np.ones(64), np.cos(2 * th), np.sin(2 * th)])
    assert circle.subspace_distance(B, other) > 0.5


def test_stabilizer_of_non_constant_potential_two_ways():
    inv = virasoro.classify(potential(), 1.3)
    assert inv.stabilizer_dim == inv.stabilizer_dim_fourier == 1
    assert inv.stabilizer_agreement < 1e-9


# ------------------------------------------------------ constant representative
@pytest.mark.parametrize("T0", [0.09, 0.49, -0.3, 0.0, 1.0, 2.25])
def test_constant_representative_recovered_from_a_moved_constant(T0):
    # Phi_F T0 lies on the orbit of T0, so the classifier must return T0 (references.md, Virasoro orbit facts)
    c = 1.0
    F = virasoro.Diffeo.random(np.random.default_rng(7), modes=(1, 2), strength=0.4)
    inv = virasoro.classify(virasoro.transform(T0, c, F, M=256), c)
    assert inv.representative == pytest.approx(T0, abs=1e-9)


def test_no_constant_on_hyperbolic_orbits_with_winding():
    # hyperbolic monodromy with rotation number 1/2 (a potential well below n = 1 resonance): no constant
    # T = 1/4 + 0.6 cos(theta): parametric resonance at k = 1/2 (from memory: the first instability
    # tongue of Hill's equation), monodromy hyperbolic with negative eigenvalues
    q = circle.Periodic.from_real_modes([1], [0.6], [0.0], a0=0.25)
    inv = virasoro.classify(q, 1.0)
    assert inv.orbit_class == "hyperbolic" and inv.rotation_number == 0.5
    assert inv.representative is None


# ---------------------------------------------------------- projective structures
def test_potential_of_developing_map_has_the_class_of_its_monodromy():
    # f = exp(lam theta) -> f(theta + 2pi) = e^{2 pi lam} f: hyperbolic, |trace| = 2 cosh(pi lam) (references.md, Virasoro)
    lam, c = 0.3, 1.0
    T = virasoro.potential_from_developing_map(lambda t: jnp.exp(lam * t + 0.2 * jnp.sin(t)), c, 64)
    inv = virasoro.classify(T, c)
    assert inv.orbit_class == "hyperbolic"
    assert abs(inv.trace) == pytest.approx(2 * np.cosh(np.pi * lam), rel=1e-11)


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


# ------------------------------------------------------------ command line
def test_classify_file_and_cli(tmp_path, capsys):
    th = circle.grid(128)
    np.save(tmp_path / "ring.npy", 0.3 + 0.1 * np.cos(th))
    (tmp_path / "hill.py").write_text("import numpy as np\nc = 4.0\ndef T(t):\n    return 1.0 + 0 * t\n")
    d = virasoro.classify_file(tmp_path / "hill.py")
    # T0/c = 1/4 = n^2/4 with n = 1: monodromy (-1)^1 I (references.md, Virasoro)
    assert d.orbit_class == "-identity" and d.stabilizer_dim == 3
    assert d.representative == pytest.approx(1.0, abs=1e-12)
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
    assert "under-resolved" in d.warning


# ------------------------------------------------ the classification as a result
def test_classification_report_explain_and_json_round_trip(tmp_path, capsys):
    inv = virasoro.classify(potential(), 1.3)
    rep = inv.report()
    assert isinstance(rep, hamcheck.Report) and rep.passed, str(rep)
    assert set(rep.results) == {"stabilizers_agree", "propagator_error", "constant_trace"}
    assert rep.explain() == ""  # nothing fails, nothing to explain
    back = circle.OrbitClassification.from_dict(json.loads(inv.to_json()))
    assert back.orbit_class == inv.orbit_class and back.trace == inv.trace
    assert np.array_equal(back.matrix, inv.matrix) and back.report().passed
    assert hamcheck.Report.from_dict(rep.to_dict()).passed
    # the CLI's JSON is the same dictionary, with the self-consistency checks
    np.save(tmp_path / "ring.npy", potential().on_grid(128))
    assert main(["classify", str(tmp_path / "ring.npy"), "--c", "1.3", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["checks"]["stabilizers_agree"]["status"] == "pass" and out["class"] == inv.orbit_class


def test_classification_checks_fail_on_planted_mistakes():
    # planted mistake 1: a Fourier truncation far too coarse for a non-constant potential finds no kernel
    coarse = virasoro.classify(potential(), 1.3, K=3)
    rep = coarse.report()
    assert coarse.stabilizer_dim == 1 and coarse.stabilizer_dim_fourier != 1
    assert rep.results["stabilizers_agree"].status == "fail" and not rep.passed
    text = " ".join(rep.explain().split())
    assert "stabilizers_agree" in text and "Fourier-truncated infinitesimal action" in text
    # planted mistake 2: a monodromy known only roughly (an error estimate of 1e-6)
    rough = dataclasses.replace(virasoro.classify(potential(), 1.3, tol=1e-5), error=1e-6).report()
    assert rough.results["propagator_error"].status == "fail"
    # planted mistake 3: a representative that is not on the orbit (0.09 and 0.49 share the trace: use 0.2)
    good = virasoro.classify(0.09, 1.0)
    wrong = dataclasses.replace(good, representative=0.2, representative_trace=2 * np.cos(2 * np.pi * np.sqrt(0.2)))
    assert good.report().passed and wrong.report().results["constant_trace"].status == "fail"


def test_convergence_error_when_the_step_budget_is_too_small():
    with pytest.raises(hamcheck.ConvergenceError, match="did not reach its target"):
        virasoro.monodromy(potential(), 1.3, max_steps=128)
