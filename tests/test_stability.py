"""Stability charts of Hill potentials (hamcheck.virasoro.stability).

Reference values
----------------
* Mathieu's equation ``y'' + (a - 2q cos 2x) y = 0`` (Abramowitz & Stegun, ch. 20; values from
  ``scipy.special.mathieu_a`` / ``mathieu_b``): for q > 0 the characteristic values are ordered
  a_0 < b_1 < a_1 < b_2 < a_2 < ...; solutions are unbounded (unstable) for a < a_0 and for
  b_n(q) < a < a_n(q), bounded (stable) in between. At a_n, b_n there is a solution of period pi
  (n even) or 2 pi (n odd, antiperiodic over pi).
* Constant potentials (from memory; also in the project's notes on Virasoro orbits): for c psi'' + T0 psi = 0,
  trace 2 cos(2 pi k), k = sqrt(T0/c), for T0/c > 0; 2 cosh(2 pi sqrt(-T0/c)) for T0/c < 0; rotation
  number sqrt(T0/c); monodromy (-1)^n I at T0 = c n^2 / 4.

The correspondence with hamcheck's circle R/2piZ and its Hill operator ``c d^2 + T``:
* (A) T(theta) = a - 2q cos 2theta with c = 1 and theta = x. T has period pi, and hamcheck integrates
  over 2 pi, so its monodromy is the SQUARE of Mathieu's period-pi map M_pi: tr = tr(M_pi)^2 - 2.
  Unstable (|tr M_pi| > 2) <=> tr > 2: hyperbolic. Stable (|tr M_pi| < 2) <=> -2 <= tr < 2: elliptic
  (or -identity on the curves tr M_pi = 0). Every Mathieu edge is a trace +2 curve.
* (B) theta = 2x: psi(theta) = y(theta/2) gives 4 psi'' + (a - 2q cos theta) psi = 0, so c = 4 and
  T(theta) = a - 2q cos theta; hamcheck's monodromy is conjugate to M_pi itself (psi' = y'/2 only
  rescales a coordinate), so the edges a_n, b_n are trace +2 for n even and -2 for n odd.
"""

import json

import numpy as np
import pytest
from scipy.special import mathieu_a, mathieu_b

from hamcheck import HamcheckError, UsageError, virasoro
from hamcheck.cli import main
from hamcheck.virasoro.stability import CHART_CLASSES, StabilityChart, stability_chart


def mathieu_A(a, q):  # correspondence (A): c = 1
    return lambda th: a - 2 * q * np.cos(2 * th)


def mathieu_B(a, q):  # correspondence (B): c = 4
    return lambda th: a - 2 * q * np.cos(th)


def edges(q, n_max=10):
    """Mathieu characteristic values a_0..a_n, b_1..b_n at q (scipy; A&S ch. 20)."""
    return np.array([mathieu_a(n, q) for n in range(n_max + 1)]), np.array([np.nan] + [mathieu_b(n, q) for n in range(1, n_max + 1)])


def predicted_unstable(a, q):
    """A&S ch. 20: unstable for a < a_0(q) and for b_n(q) < a < a_n(q), n >= 1 (q > 0)."""
    an, bn = edges(q)
    return bool(a < an[0] or np.any((bn[1:] < a) & (a < an[1:])))


def distance_to_edges(a, q):
    an, bn = edges(q)
    return float(np.nanmin(np.abs(np.r_[an, bn[1:]] - a)))


A_VALUES = np.linspace(-3.0, 26.0, 59)
Q_VALUES = np.array([0.5, 1.5, 3.0, 5.0, 8.0])
EDGE_MARGIN = 0.02  # away from the edges: |trace - 2| grows at O(1) or faster per unit of a there


@pytest.fixture(scope="module")
def chart_A():
    return stability_chart(mathieu_A, A_VALUES, Q_VALUES, c=1.0)


def _disagreements(chart, stable_classes=("elliptic", "-identity")):
    bad, compared = [], 0
    for i, q in enumerate(chart.b_values):
        for j, a in enumerate(chart.a_values):
            if distance_to_edges(a, q) < EDGE_MARGIN:
                continue
            compared += 1
            unstable = predicted_unstable(a, q)
            got = str(chart.classes[i, j])
            if (got == "hyperbolic") != unstable or (not unstable and got not in stable_classes):
                bad.append((a, q, got, unstable))
    return bad, compared


def test_mathieu_chart_agrees_with_the_characteristic_values(chart_A):
    bad, compared = _disagreements(chart_A)
    assert compared > 250 and not bad, bad[:5]
    # both kinds of region occur, and the tongues open from a = n^2 (q -> 0)
    assert {"elliptic", "hyperbolic"} <= set(np.unique(chart_A.classes))


def test_planted_sign_mistake_disagrees_with_the_characteristic_values():
    # negative control: the Schrodinger form -y'' + (a - 2q cos 2x) y = 0 is c = 1, T = -(a - 2q cos 2x)
    wrong = stability_chart(lambda a, q: (lambda th: -(a - 2 * q * np.cos(2 * th))), A_VALUES, Q_VALUES)
    bad, compared = _disagreements(wrong)
    assert len(bad) > compared // 4


def test_characteristic_values_are_the_parabolic_edges():
    for q in (0.5, 3.0, 8.0):
        an, bn = edges(q, 5)
        values = np.r_[an, bn[1:]]
        orders = np.r_[np.arange(6), np.arange(1, 6)]
        B = stability_chart(mathieu_B, values, [q], c=4.0)
        # (B): period pi (n even) is trace +2, antiperiodic (n odd) trace -2
        assert list(B.classes[0]) == ["parabolic+" if n % 2 == 0 else "parabolic-" for n in orders]
        A = stability_chart(mathieu_A, values, [q], c=1.0)
        # (A): the square of (B)'s monodromy: trace +2 at every edge
        np.testing.assert_allclose(A.traces[0], 2.0, atol=1e-8)
        np.testing.assert_allclose(A.traces[0], B.traces[0] ** 2 - 2, atol=1e-8)


def test_squaring_relation_over_a_grid():
    a, q = np.linspace(-1, 10, 12), [0.7, 2.5]
    A, B = stability_chart(mathieu_A, a, q), stability_chart(mathieu_B, a, q, c=4.0)
    scale = np.maximum(1.0, np.abs(A.traces))
    assert np.all(np.abs(A.traces - (B.traces**2 - 2)) <= 1e-9 * scale)
    # rotation numbers: going around twice doubles the winding (rho_A = 2 rho_B for the period-2pi problem in (B))
    np.testing.assert_allclose(A.rotation_numbers, 2 * B.rotation_numbers, atol=1e-9)


def test_constant_potentials():
    T0 = np.array([-0.3, 0.09, 0.5, 2.0])
    chart = stability_chart(lambda T, c: T, T0, [1.0], c=1.0)  # numbers: constant potentials
    k = np.sqrt(np.abs(T0))
    expected = np.where(T0 > 0, 2 * np.cos(2 * np.pi * k), 2 * np.cosh(2 * np.pi * k))
    np.testing.assert_allclose(chart.traces[0], expected, rtol=1e-11)
    np.testing.assert_allclose(chart.rotation_numbers[0, 1:], k[1:], rtol=1e-12)
    assert chart.rotation_numbers[0, 0] == 0.0 and chart.classes[0, 0] == "hyperbolic"
    # T0 = c n^2 / 4: monodromy (-1)^n I
    central = stability_chart(lambda n, c: c * n**2 / 4, [1, 2, 3], [1.0, 2.5], c=1.0)  # c = 1: only n matters
    assert central.classes[0].tolist() == ["-identity", "+identity", "-identity"]


def test_classes_and_invariants_match_classify():
    rng = np.random.default_rng(7)
    a = rng.uniform(-2, 12, 6)
    q = rng.uniform(0, 6, 2)
    chart = stability_chart(mathieu_A, a, q, c=1.0)
    assert set(np.unique(chart.classes)) <= set(CHART_CLASSES)
    for i, qq in enumerate(q):
        for j, aa in enumerate(a):
            d = virasoro.classify(mathieu_A(aa, qq), c=1.0)
            assert chart.classes[i, j] == d["class"]
            assert abs(chart.traces[i, j] - d["trace"]) <= 1e-10 * max(1.0, abs(d["trace"]))
            assert abs(chart.rotation_numbers[i, j] - d["rotation_number"]) <= 1e-10


def test_classify_class_names_on_special_points():
    # points where classify gives each class: the chart must use the same name
    cases = [(mathieu_A, 0.3, 0.0, 1.0), (mathieu_A, -1.0, 0.0, 1.0), (lambda T, _: T, 1.0, 0.0, 1.0),
             (lambda T, _: T, 0.25, 0.0, 1.0), (lambda T, _: T, 0.0, 0.0, 1.0), (mathieu_B, mathieu_a(1, 2.0), 2.0, 4.0)]
    for pot, a, b, c in cases:
        chart = stability_chart(pot, [a], [b], c=c)
        assert chart.classes[0, 0] == virasoro.classify(pot(a, b), c=c)["class"], (a, b)


def test_unconverged_points_are_undetermined_never_a_wrong_class():
    q = 4.0
    an, bn = edges(q, 3)
    a = np.sort(np.r_[np.linspace(-2, 12, 40), an, bn[1:]])  # grid points on the edges, where trace = 2
    good = stability_chart(mathieu_A, a, [q])
    coarse = stability_chart(mathieu_A, a, [q], max_steps=128)  # stopped before the error target
    assert (coarse.steps <= 128).all() and (coarse.errors > 1e-12).all()  # none reached CHART_TOL
    decided = coarse.classes != "undetermined"
    on_edge = np.isin(a, np.r_[an, bn[1:]])[None, :]
    assert not decided[on_edge].any()  # a parabolic verdict would claim more than the integration knows
    assert decided.sum() > 30 and (coarse.classes[decided] == good.classes[decided]).all()


def test_plot_and_json(chart_A, tmp_path):
    path = chart_A.plot(tmp_path / "mathieu.png")
    assert (tmp_path / "mathieu.png").stat().st_size > 10_000 and path.endswith("mathieu.png")
    d = json.loads(chart_A.to_json())
    assert d["names"] == ["a", "q"] and len(d["classes"]) == len(Q_VALUES) and len(d["classes"][0]) == len(A_VALUES)
    assert sum(d["counts"].values()) == chart_A.classes.size
    assert "hyperbolic" in repr(chart_A) and isinstance(chart_A, StabilityChart)
    with pytest.raises(Exception):
        chart_A.classes[0, 0] = "elliptic"  # frozen arrays


def test_bad_input_is_one_clear_error():
    with pytest.raises(UsageError, match=r"potential\(1.0, 0.0\) raised ZeroDivisionError"):
        stability_chart(lambda a, b: 1 / b, [1.0], [0.0])
    with pytest.raises(UsageError, match="c must be a finite non-zero number; got 0"):
        stability_chart(mathieu_A, [1.0], [0.0], c=0.0)
    with pytest.raises(UsageError, match="c must be a finite non-zero number"):
        stability_chart(mathieu_A, [1.0], [0.0], c=float("nan"))
    with pytest.raises(UsageError, match="NaN or inf"):
        stability_chart(lambda a, b: (lambda th: np.full_like(th, np.nan)), [1.0], [0.0])
    with pytest.raises(HamcheckError, match=r"a_values must be finite numbers \(at least one\)"):
        stability_chart(mathieu_A, [], [0.0])


def test_stability_command_writes_png_and_json(tmp_path, capsys):
    f = tmp_path / "ring.py"
    # invented scenario: a clamped ring whose stiffness is pumped at twice its turning rate
    f.write_text("import numpy as np\nc = 1.0\ndef potential(q, a):\n    return lambda th: a - 2 * q * np.cos(2 * th)\n")
    png, js = tmp_path / "ring.png", tmp_path / "ring.json"
    code = main(["stability", str(f), "--a", "0", "6", "13", "--b", "-1", "10", "23", "--png", str(png), "--json", str(js)])
    assert code == 0 and png.stat().st_size > 10_000
    d = json.loads(js.read_text())
    assert d["names"] == ["q", "a"] and len(d["classes"]) == 23 and len(d["classes"][0]) == 13
    assert "wrote" in capsys.readouterr().out
    assert main(["stability", str(tmp_path / "none.py"), "--a", "0", "1", "2", "--b", "0", "1", "2"]) == 2


def test_chart_on_a_cluster_equals_the_local_chart(monkeypatch):
    from _cluster import two_workers

    import hamcheck.virasoro.stability as st

    monkeypatch.setattr(st, "MIN_TASK_SECONDS", 0.01)  # several tasks, so chunks are really reassembled
    a, q = np.linspace(-2, 12, 30), np.linspace(0, 6, 20)
    local = stability_chart(mathieu_A, a, q)
    with two_workers() as (_, client):
        remote = stability_chart(mathieu_A, a, q, client=client)
    assert remote.tasks > 2
    for name in ("classes", "traces", "rotation_numbers", "errors", "steps"):
        np.testing.assert_array_equal(getattr(remote, name), getattr(local, name))
