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
