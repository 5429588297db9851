"""Disks with several cone points: method B against method A, the two-cone trace identity, equivariance, chart, CLI."""

import json
import math

import numpy as np
import pytest

from hamcheck import circle, hyperbolic, virasoro
from hamcheck.cli import main
from hamcheck.hyperbolic.accessory import loops

C = 1.5
TWO = [(-0.4, 0.6 * 2 * math.pi), (0.4, 0.6 * 2 * math.pi)]


@pytest.fixture(scope="module")
def two_cone():
    return hyperbolic.cone_metric(TWO)


def test_method_b_monodromies_are_real_elliptic_with_the_cone_traces():
    sol = hyperbolic.solve_accessory([(0.1 + 0.5j, 3.0), (-0.6, 2.0), (0.4 - 0.3j, 5.0)])
    assert sol.residual < 1e-11
    # local exponents (1 +- beta)/2 of y'' + q y = 0 at a double pole (1 - beta^2)/4: trace -2 cos(pi beta)
    # (Frobenius; from memory)
    for t, c in zip(sol.traces, sol.cones):
        assert abs(t + 2 * math.cos(math.pi * c.beta)) < 1e-10
    # reflection symmetry q(z) = conj(q(1/conj z)) / z^4 (from memory; the complete metric extends by reflection)
    z = np.array([0.3 + 0.1j, -0.2j, 0.8])
    assert np.abs(sol.q(z) - np.conj(sol.q(1 / np.conj(z))) / z**4).max() < 1e-12


def test_one_cone_method_b_reproduces_the_closed_form():
    # a single cone has no free accessory parameter: q must be the pulled-back closed form
    p = 0.3 - 0.45j
    sol = hyperbolic.solve_accessory([(p, 2.2)])
    z = np.array([0.1, 0.5j, -0.7 + 0.1j])
    assert np.allclose(sol.q(z), hyperbolic.cone_disk(2.2, p).q(z), rtol=1e-12)


def test_method_a_agrees_with_method_b_and_converges():
    # convergence of method A's residues towards method B's under grid refinement, with a fitted order
    sol = hyperbolic.solve_accessory(TWO)
    grids = [(21, 32), (29, 44), (41, 64)]
    bs = [hyperbolic.residues_from_u(hyperbolic.solve_liouville(TWO, *g).u, sol.cones)[0] for g in grids]
    errs = [float(np.abs(b - sol.b).max()) for b in bs]
    order = -np.polyfit(np.log([g[0] for g in grids]), np.log(errs), 1)[0]
    assert order > 2 and errs[-1] < errs[0] / 5, (errs, order)
    # the change between successive grids (method A's own error estimate) covers the coarser grid's error
    for k in range(2):
        assert errs[k] <= 3 * float(np.abs(bs[k] - bs[k + 1]).max()) + 1e-12, errs


def test_compare_methods_on_q_potential_and_class():
    ag = hyperbolic.compare_methods([(-0.3 + 0.2j, 2.5), (0.35, 4.0)], c=C)
    assert ag.agree, ag
    assert ag.class_a == ag.class_b


def test_compare_methods_on_three_cones():
    # three cones (two free accessory parameters): the Liouville solution (A) and the monodromy root (B) agree on
    # the residues and the boundary potential within A's own error estimate, and give one class
    ag = hyperbolic.compare_methods([(0.1 + 0.5j, 3.0), (-0.6, 2.0), (0.4 - 0.3j, 5.0)], c=C)
    assert ag.agree, ag
    assert ag.class_a == ag.class_b
    assert abs(ag.trace_a - ag.trace_b) <= 1e-4 * abs(ag.trace_b)


def test_two_cone_trace_identity_against_distance(two_cone):
    # product of rotations by a1, a2 about points at distance d: tr = +-2[cos(a1/2)cos(a2/2) - sin sin cosh d]
    # (hyperbolic trigonometry, e.g. Beardon, Geometry of discrete groups, sec. 7.38; from memory)
    d = two_cone.distance(TWO[0][0], TWO[1][0])
    a1, a2 = TWO[0][1], TWO[1][1]
    pred = 2 * (math.cos(a1 / 2) * math.cos(a2 / 2) - math.sin(a1 / 2) * math.sin(a2 / 2) * math.cosh(d))
    tr = hyperbolic.classify_metric(two_cone, c=C)["trace"]
    dpred = 2 * math.sin(a1 / 2) * math.sin(a2 / 2) * math.sinh(d) * (d.error + 1e-6)
    assert abs(abs(tr) - abs(pred)) < 10 * dpred, (tr, pred, d)


def test_two_cone_metric_validates(two_cone):
    r = hyperbolic.check_metric(two_cone, points=12)
    assert r.passed, r


def circle_lift(a, M=128):
    th = circle.grid(M)
    return virasoro.Diffeo(circle.Periodic.from_samples(2 * np.angle(1 - a * np.exp(-1j * th))))


def test_moebius_equivariance_two_cones():
    # g' = phi_a^* g has cones at phi_a^{-1}(p_j) and T' = Phi_F T, F the lift of phi_a (virasoro.md, right action)
    a = -0.2 + 0.25j
    cones = [(-0.3 + 0.1j, 2.0), (0.4, 3.5)]
    moved = [((p + a) / (1 + np.conj(a) * p), al) for p, al in cones]
    T = hyperbolic.boundary_potential(hyperbolic.cone_metric(cones), C)
    Tm = hyperbolic.boundary_potential(hyperbolic.cone_metric(moved), C)
    assert np.abs(virasoro.transform(np.asarray(T), C, circle_lift(a), M=256) - Tm).max() < 1e-9


def test_method_b_root_is_the_hyperbolic_one_negative_control():
    # planted mistake: perturbing the accessory parameter breaks the reality of the monodromy
    sol = hyperbolic.solve_accessory(TWO)
    fam = sol.family
    lp = loops(sol.cones, sol.q.singular_points)
    bad = fam.q(sol.x + 1e-3)
    im = max(np.abs(L.monodromy(bad).matrix.imag).max() for L in lp)
    assert im > 1e-5


def test_chart_png_and_json(tmp_path):
    ch = hyperbolic.two_cone_chart([1.0, 3.0, 5.0], [0.1, 0.6], c=C, jobs=1)
    assert ch.classes[0] == ["hyperbolic", "hyperbolic"]
    assert ch.classes[2][0] == "elliptic"  # close cones of angle 5 act like one cone of angle 10 - 2 pi < 2 pi
    data = json.loads(open(ch.to_json(tmp_path / "c.json")).read())
    assert data["cells"][2][0]["class"] == "elliptic"
    assert (tmp_path / "c.png").exists() is False
    ch.plot(tmp_path / "c.png")
    assert (tmp_path / "c.png").stat().st_size > 10_000


def test_cli_disk(tmp_path, capsys):
    f = tmp_path / "pair.py"
    f.write_text("import math\nc = 1.5\ncones = [(0.3j, 2.0)]\n")
    assert main(["disk", str(f), "--points", "8"]) == 0
    out = capsys.readouterr().out
    assert "PASSED" in out and "elliptic" in out
    g = tmp_path / "sphere.py"
    g.write_text("import jax.numpy as jnp\ndef u(x, y):\n    return jnp.log(2 / (1 + x * x + y * y))\n")
    assert main(["disk", str(g), "--points", "8"]) == 1
    assert "curvature-sign" in capsys.readouterr().out
    assert main(["disk", str(tmp_path / "missing.py")]) == 2
