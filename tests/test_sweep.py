"""Sweeps of model families (hamcheck.sweep; module hamcheck.sweeps).

The family: the plane R^2, omega = dx ^ dy, rotations, moment map mu = -s (x^2 + y^2)/2 with the form
scaled by w. The axioms hold exactly when s = w (standard: mu = -(x^2 + y^2)/2 for the rotation
generator and omega = dx ^ dy, from memory), so s != w is a planted mistake (a moment-scale finding).
Every row must equal an individual hamcheck.check call with the same points and seed.
"""

import csv
import io
import json

import jax.numpy as jnp
import numpy as np
import pytest

import hamcheck
from hamcheck import SweepTable, sweep

U1 = hamcheck.LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])], names=["rot"])
KW = {"points": 4, "seed": 3, "only": ["antisymmetric", "moment_map"]}


def plane(s, w=1.0):
    return hamcheck.Model(
        f"plane s={s} w={w}", 2, form=lambda x: w * jnp.array([[0.0, 1.0], [-1.0, 0.0]]), algebra=U1,
        moment=lambda x: jnp.array([-s * (x[0] ** 2 + x[1] ** 2) / 2]), action=lambda g, x: g @ x,
    )


GRID = {"s": [1.0, 2.0], "w": [1.0, 2.0]}


@pytest.fixture(scope="module")
def table():
    return sweep(plane, GRID, **KW)


def test_sweep_rows_equal_individual_checks(table):
    assert [dict(r.params) for r in table] == [{"s": 1.0, "w": 1.0}, {"s": 1.0, "w": 2.0}, {"s": 2.0, "w": 1.0}, {"s": 2.0, "w": 2.0}]
    for row in table:
        report = hamcheck.check(plane(**row.params), **KW)
        assert row.passed == report.passed
        assert dict(row.status) == {c: r.status for c, r in report.results.items()}
        assert dict(row.residual) == {c: r.residual for c, r in report.results.items()}
        assert row.findings == tuple(sorted({f.kind for f in report.findings}))
    # the planted mistakes fail, the consistent members pass
    assert [r.passed for r in table] == [True, False, False, True]
    assert table[1].failing == ("moment_map",) and "moment-scale" in table[1].findings
    assert table[1].replay == "hamcheck.check(plane(s=1.0, w=2.0), points=4, seed=3, only=['moment_map'])"
    assert table.checks == ("antisymmetric", "moment_map") and not table.passed


def test_exports(table, tmp_path):
    rows = list(csv.DictReader(io.StringIO(table.to_csv())))
    assert [r["passed"] for r in rows] == ["True", "False", "False", "True"]
    assert float(rows[1]["moment_map:residual"]) == table[1].residual["moment_map"]
    d = json.loads(table.to_json())
    assert d["parameters"] == ["s", "w"] and d["rows"][2]["status"]["moment_map"] == "fail"
    assert table.column("s") == [1.0, 1.0, 2.0, 2.0] and table.column("moment_map:status")[1] == "fail"
    assert table[0].margin() < 0 < table[1].margin()  # passes with room; fails past its tolerance
    assert "4 models over s, w: 2 pass, 2 fail" in repr(table) and isinstance(table, SweepTable)
    for args in ({"x": "s", "y": "w"}, {"x": "s"}):
        path = tmp_path / f"sweep{len(args)}.png"
        table.plot(path, **args)
        assert path.stat().st_size > 5_000
    with pytest.raises(hamcheck.UsageError, match="no parameter 'q'"):
        table.plot(tmp_path / "x.png", x="q")


def test_list_grid_and_a_build_that_raises():
    def build(s):
        if s < 0:
            raise hamcheck.ModelError("s must be positive")
        return plane(s)

    t = sweep(build, [{"s": 1.0}, {"s": -1.0}], **KW)
    assert t[0].passed is True and t[1].passed is None
    assert t[1].message == "build raised ModelError: s must be positive"
    with pytest.raises(hamcheck.UsageError, match="grid\\['s'\\] is empty"):
        sweep(build, {"s": []})


def test_sweep_on_a_cluster_equals_the_local_sweep(table):
    from _cluster import two_workers

    with two_workers() as (_, client):
        remote = sweep(plane, GRID, client=client, **KW)
    assert [r.to_dict() | {"seconds": 0} for r in remote] == [r.to_dict() | {"seconds": 0} for r in table]


def _counting_compiles(monkeypatch):
    """Count XLA compilations of check programs (hamcheck.checks.run compiles through compile_lowered)."""
    import hamcheck.checks.run as run
    from hamcheck import cache

    # the program store would serve the one-member baseline from an earlier test: count real compiles
    monkeypatch.setitem(cache._state, "store_off", True)
    calls = []
    real = run.compile_lowered
    monkeypatch.setattr(run, "compile_lowered", lambda low, options=None, **kw: calls.append(1) or real(low, options, **kw))
    return calls


def rotating_plane(n, s, w=1.0):
    """R^{2n} with the circle turning every plane, moment -s|x|^2/2, form w * standard (right when s = w)."""
    J = np.kron(np.eye(n), np.array([[0.0, -1.0], [1.0, 0.0]]))
    circle = hamcheck.LieAlgebra.from_matrices([J], names=["rot"])
    std = -J  # omega = sum dx_k ^ dy_k as the matrix omega_ij
    return hamcheck.Model(
        f"plane^{n} s={s}", 2 * n, form=lambda x: w * jnp.asarray(std), algebra=circle,
        moment=lambda x: jnp.array([-s * (x @ x) / 2]), action=lambda g, x: g @ x,
    )


def test_members_of_one_shape_share_their_compiled_programs(monkeypatch):
    # The members differ only in the floats s, w: the sweep compiles the programs of one member, and
    # each row still equals that member's own check (the mistakes s != w are still caught).
    def family(s, w):
        return rotating_plane(1, s, w)

    calls = _counting_compiles(monkeypatch)
    hamcheck.check(family(1.0, 1.0), **KW)
    one = len(calls)
    calls.clear()
    grid = {"s": [1.0, 2.0], "w": [1.0, 2.0, 3.0]}
    table = sweep(family, grid, **KW)
    assert len(calls) == one, "six members of one shape compiled more programs than one member"
    assert table.programs == ("shared by the members of one shape (s, w traced)",)
    for row in table:
        report = hamcheck.check(family(**row.params), **KW)
        assert row.passed == report.passed == (row.params["s"] == row.params["w"])
        assert dict(row.residual) == pytest.approx({c: r.residual for c, r in report.results.items()}, rel=1e-12, abs=1e-300)


def test_an_int_parameter_is_a_shape_and_gets_programs_of_its_own(monkeypatch):
    calls = _counting_compiles(monkeypatch)
    hamcheck.check(rotating_plane(1, 1.0), **KW)
    one = len(calls)
    calls.clear()
    table = sweep(rotating_plane, {"n": [1, 2], "s": [1.0, 1.5, 2.0]}, **KW)
    assert len(calls) == 2 * one  # one set per n, shared by the three values of s
    assert [r.passed for r in table] == [True, False, False, True, False, False]


def test_a_build_that_branches_on_a_parameter_is_checked_per_member(monkeypatch):
    # Python control flow on s cannot take a traced value: every member compiles its own programs,
    # the rows are still right, and the table says why it did not share.
    def family(s):
        if s > 1.5:
            return rotating_plane(1, s, 2.0)
        return rotating_plane(1, s, 1.0)

    calls = _counting_compiles(monkeypatch)
    hamcheck.check(family(1.0), **KW)
    one = len(calls)
    calls.clear()
    table = sweep(family, {"s": [1.0, 2.0, 3.0]}, **KW)
    assert [r.passed for r in table] == [True, True, False]
    assert len(calls) == 3 * one
    assert len(table.programs) == 1 and "could not take traced s" in table.programs[0]
    assert "TracerBoolConversionError" in table.programs[0]


def test_a_shared_degeneracy_search_still_finds_each_members_degenerate_line():
    # Planted mistake per member: (x - a) dx^dy vanishes on the line x = a, which the samples avoid, so only
    # the degeneracy search (compiled once for the family, a traced) can land there; it must land on each
    # member's own line. Moment map -(x - a)^2/2 for the translation d/dy: iota_X omega = -(x - a) dx
    # = d<mu, dy>, so everything else holds (from memory).
    J2 = jnp.array([[0.0, 1.0], [-1.0, 0.0]])
    vertical = hamcheck.LieAlgebra.from_matrices([np.array([[0.0, 0, 0], [0, 0, 1], [0, 0, 0]])], names=["dy"])

    def family(a):
        return hamcheck.Model(
            "plane degenerate on x = a", 2, form=lambda x: (x[0] - a) * J2, algebra=vertical,
            moment=lambda x: jnp.array([-(x[0] - a) ** 2 / 2]),
            action=lambda g, x: (g @ jnp.array([x[0], x[1], 1.0]))[:2],
            sample=lambda rng: np.array([a + rng.uniform(0.2, 2.0) * rng.choice([-1, 1]), rng.standard_normal()]),
        )

    kw = {"points": 8, "seed": 1, "only": ["nondegenerate", "moment_map"]}
    table = sweep(family, {"a": [-1.0, 0.5, 2.0]}, **kw)
    assert table.programs == ("shared by the members of one shape (a traced)",)
    for row in table:
        assert row.status["moment_map"] == "pass" and row.status["nondegenerate"] == "fail", row
        alone = hamcheck.check(family(**row.params), **kw).results["nondegenerate"]
        assert abs(alone.worst_point[0] - row.params["a"]) < 1e-6  # the member's own line
        assert row.residual["nondegenerate"] < 0.1 * row.tolerance["nondegenerate"]  # well past the tolerance
        assert row.residual["nondegenerate"] == pytest.approx(alone.residual, rel=1e-6, abs=1e-14)


SCALE = {"w": 1.0}  # a global the family reads: changing it between sweeps must change the results


def test_programs_do_not_outlive_their_sweep():
    # planted: the same build function, a global changed between two sweeps (a notebook cell edited and rerun);
    # a program kept on the build function would still carry the old value
    def family(s):
        return rotating_plane(1, s, SCALE["w"])

    first = sweep(family, {"s": [1.0, 2.0]}, **KW)
    SCALE["w"] = 2.0
    try:
        second = sweep(family, {"s": [1.0, 2.0]}, **KW)
    finally:
        SCALE["w"] = 1.0
    assert [r.passed for r in first] == [True, False]
    assert [r.passed for r in second] == [False, True]
