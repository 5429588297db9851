"""Tests of hamcheck.virasoro.orbit_chart: the truncated orbit chart, its base form, resolution studies.

References: docs/references.md, Virasoro (mode formula of the KKS form at a constant; from memory).
"""

import functools
import warnings

import jax.numpy as jnp
import numpy as np
import pytest

import hamcheck
from hamcheck import virasoro
from helpers import potential


@functools.cache
def chart():
    return virasoro.orbit_model(0.1, 1.0, [1, 2])


def test_orbit_model_passes_every_check():
    report = hamcheck.check(chart(), points=3, settings=hamcheck.Settings(search_starts=0))
    assert report.passed, str(report)
    for name in ("closed", "moment_map", "antisymmetric", "equivariance", "group_equivariance"):
        assert report.results[name].status == "pass"


def test_kks_mode_formula_at_the_base_point():
    # references.md, Virasoro: omega(cos m, sin m) = 2 pi / (m (c m^2 - 4 T0)) for tangent vectors at T0.
    # Chart directions d/da_m, d/db_m map to delta_{cos} T0 = (m/2)(c m^2 - 4T0) sin and
    # delta_{sin} T0 = -(m/2)(c m^2 - 4T0) cos, hence omega(d/da, d/db) = pi m (c m^2 - 4T0)/2.
    model = chart()
    W = np.asarray(model.form(jnp.zeros(model.dim)))
    T0, c = 0.1, 1.0
    for i, m in enumerate([1, 2]):
        lam = m * (c * m * m - 4 * T0) / 2
        tangent_value = W[2 * i, 2 * i + 1] / lam**2  # omega(sin/lam, -cos/lam) -> omega(cos, sin)
        assert tangent_value == pytest.approx(2 * np.pi / (m * (c * m * m - 4 * T0)), rel=1e-13)
    assert virasoro.base_form_check(model).results["kks_base_form"].status == "pass"
    assert np.abs(W[0, 2:]).max() < 1e-13  # different m do not pair


def test_negative_controls_caught_by_named_checks():
    S = virasoro.schwarzian_from_derivatives
    only = ["closed"]
    # F' instead of F'^2 -> closed (references.md, Virasoro: residuals 2e-2 to 1)
    m1 = virasoro.orbit_model(0.1, 1.0, [1, 2], grid=48, transform=lambda T0F, F1, F2, F3, c: T0F * F1 + 0.5 * c * S(F1, F2, F3))
    r1 = hamcheck.check(m1, points=2, only=only).results["closed"]
    assert r1.status == "fail" and r1.residual > 1e-4
    # missing 1/F' in the tangent map -> closed
    m2 = virasoro.orbit_model(0.1, 1.0, [1, 2], grid=48, tangent=lambda dF, F1: dF)
    r2 = hamcheck.check(m2, points=2, only=only).results["closed"]
    assert r2.status == "fail" and r2.residual > 1e-4
    # wrong Schwarzian coefficient (c/12): another valid orbit, caught by kks_base_form
    m3 = virasoro.orbit_model(0.1, 1.0, [1, 2], grid=48, transform=lambda T0F, F1, F2, F3, c: T0F * F1**2 + c / 12 * S(F1, F2, F3))
    base = virasoro.base_form_check(m3)
    assert base.results["kks_base_form"].status == "fail"
    # the finding names the central charge the chart's form belongs to: c/12 S(F) is c' = c/6 (ratio 1/6)
    finding = next(f for f in base.findings if f.kind == "central-cocycle")
    assert finding.data["ratio"] == pytest.approx(1 / 6, rel=1e-9)
    assert "kks_base_form" in base.explain() and not base.passed


def test_degenerate_mode_warns_and_names_the_mode():
    # references.md, Virasoro: a mode n with T0 = c n^2/4 makes omega degenerate at the base point
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
    # references.md, Virasoro: residuals fall geometrically with the quadrature grid; a wrong formula does not
    # antisymmetry (exact integration by parts) is the cheapest residual that sees the quadrature
    good = virasoro.chart_resolution_study(0.1, 1.0, [1, 2], [12, 24, 48], check="antisymmetric", points=2)
    assert good.verdict == "converges" and good.residuals[-1] < 1e-13
    bad = virasoro.chart_resolution_study(0.1, 1.0, [1, 2], [24, 48], check="antisymmetric", points=2, tangent=lambda dF, F1: dF)
    assert bad.verdict == "stalls"
    good.plot(tmp_path / "closed.png")
    assert (tmp_path / "closed.png").exists()


def test_pfaffian_squares_to_the_determinant():
    # Pf(A)^2 = det(A) (Cayley, from memory); Pf of 4x4 = a01 a23 - a02 a13 + a03 a12 (from memory)
    rng = np.random.default_rng(5)
    for n in (2, 4, 6, 10):
        B = rng.standard_normal((n, n))
        A = B - B.T
        assert virasoro.orbit_chart.pfaffian(A) ** 2 == pytest.approx(np.linalg.det(A), rel=1e-10)
    A = rng.standard_normal((4, 4))
    A = A - A.T
    assert virasoro.orbit_chart.pfaffian(A) == pytest.approx(A[0, 1] * A[2, 3] - A[0, 2] * A[1, 3] + A[0, 3] * A[1, 2], rel=1e-12)


@functools.cache
def indefinite_chart():
    # modes 1 and 3 at T0 = 0.6, c = 2: c n^2 - 4 T0 is -0.4 for n = 1 and 15.6 for n = 3
    with pytest.warns(UserWarning, match="degenerates near weighted radius"):
        return virasoro.orbit_model(0.6, 2.0, [1, 3])


def test_a_slice_degenerate_inside_the_default_ball_samples_a_smaller_region():
    model = indefinite_chart()
    radius = model.construction.radius
    assert 0 < radius < 0.4
    # the restriction is needed: inside the default ball (weighted radius 0.4) the Pfaffian takes both signs,
    # so the form vanishes somewhere on the segment between (intermediate value theorem, from memory)
    pf = virasoro.orbit_chart.pfaffian
    base = pf(np.asarray(model.form(jnp.zeros(4))))
    rng = np.random.default_rng(0)
    signs = set()
    for _ in range(400):
        d = rng.standard_normal(4)
        d *= 0.4 / np.sum(np.repeat([1.0, 3.0], 2) * np.abs(d))
        signs.add(np.sign(pf(np.asarray(model.form(jnp.asarray(d)))) / base))
    assert signs == {-1.0, 1.0}
    # every sampled point lies in the declared region, and the check passes there
    draws = np.stack([model.sample(np.random.default_rng(s)) for s in range(200)])
    assert np.max(np.sum(np.repeat([1.0, 3.0], 2) * np.abs(draws), axis=1)) <= radius * (1 + 1e-12)
    for seed in (0, 1):
        report = hamcheck.check(model, points=32, seed=seed)
        assert report.passed, str(report)


def test_no_restriction_where_the_scan_sees_no_trouble():
    assert chart().construction.radius == 0.4
