"""Tests of hamcheck.loop_groups.orbit_chart: the truncated orbit chart of a e_3 and its resolution studies.

References: docs/references.md, Loop groups (KKS block formula at a e_3, residuals against the grid,
the closedness trap). jax compilations are the cost: models and studies are built once (functools.cache).
"""

from __future__ import annotations

import functools

import numpy as np
import pytest

import hamcheck
from hamcheck import loop_groups as af
from hamcheck.errors import UsageError
from helpers import rel

NO_SEARCH = hamcheck.Settings(search_starts=0)


@functools.cache
def small_model():
    return af.orbit_model(0.3, 1.0, 1, grid=32)


def test_orbit_form_at_base_point_is_the_kks_block_formula():
    # references.md, Loop groups: (pi/2)[c n I(x)J + a J(x)I] per mode, pi c n / 2 in the e3 sector, pi a for constants
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
        # references.md, Loop groups: g^-1 d_i g instead of (d_i g) g^-1 fails (0.31 there)
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
    # references.md, Loop groups: residuals fall spectrally with M (geometric decay) to round-off
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
    # references.md, Loop groups trap: with coefficient 2c the form is closed; only the moment check sees it
    s = study_2c()
    assert s.studies["closed"].residuals[-1] <= 1e-12
    assert s.studies["moment_map"].verdict == "stalls"
    assert not s.verified and "closed and wrong" in s.verdict


def test_flipped_level_in_the_chart_is_caught_by_the_moment_check():
    # references.md, Loop groups: g A0 g^-1 - c g' g^-1 is the level -c orbit: closed, but H_rot = (1/2c) int <A, A>
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
