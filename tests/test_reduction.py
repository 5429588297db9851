"""reduce: Marsden-Weinstein hypotheses at sampled level-set points, dimension and volume.

Reference: docs/references.md F7: C^{n+1} // U(1) at |z|^2 = 2r is CP^n with volume (2 pi r)^n / n!.
"""

import math

import pytest
from pathlib import Path

import hamcheck
from test_fixed_points import oscillator

MODELS = Path(__file__).resolve().parent.parent / "models"


@pytest.fixture(scope="module")
def c3():
    return oscillator(3)


def test_c3_reduced_by_diagonal_circle(c3):
    r = 1.5
    red = hamcheck.reduce(c3, [-r], [[1.0, 1.0, 1.0]], samples=6)
    assert red.regular and red.locally_free and red.kernel_is_orbit
    assert red.dim == 4
    assert red.volume == pytest.approx((2 * math.pi * r) ** 2 / 2, rel=1e-9)  # docs/references.md F7


def test_level_zero_is_not_regular(c3):
    # negative control: the level 0 of |z|^2 is the origin, a critical point and a fixed point
    red = hamcheck.reduce(c3, [0.0], [[1.0, 1.0, 1.0]], samples=3)
    assert not red.regular and not red.locally_free


def test_kernel_estimate_covers_the_exact_volume_of_a_cp2_slice():
    # CP^2 with the circle t1 (fixed points not isolated, so the kernel estimate): the DH measure of the torus is
    # (2 pi)^2 x Lebesgue on the simplex conv{0, -e1/2, -e2/2} (docs/references.md F3; Atiyah 1982,
    # Guillemin-Sternberg 1982), so the density of mu_1 at t is (2 pi)^2 (1/2 + t) and the reduced volume is
    # 2 pi (1/2 + t) (the circle has period 2 pi).
    from hamcheck.cli import load_models

    cp2 = next(m for m in load_models(str(MODELS / "projective_space.py")) if m.name == "CP2-torus")
    t = -0.2
    red = hamcheck.reduce(cp2, [t], ["t1"], samples=4)
    exact = 2 * math.pi * (0.5 + t)
    assert "kernel estimate" in red.volume_method
    assert abs(red.volume - exact) <= red.volume_error  # the error estimate is honest ...
    assert red.volume_error < 0.1 * exact  # ... and useful


def test_a_non_compact_reduced_space_gets_no_volume(c3):
    # Negative control: C^3 reduced by the first circle alone is C^2 (infinite volume, common practice); the
    # kernel estimate does not settle, and no number is reported.
    red = hamcheck.reduce(c3, [-1.5], [[1.0, 0.0, 0.0]], samples=4)
    assert red.regular and red.locally_free and red.dim == 4
    assert red.volume is None and "may not be compact" in red.volume_method


def test_a_zero_dimensional_reduction_has_the_orbits_as_kernel():
    # The sphere reduced by its rotation at height 0.5 is one point (common practice): T Z is one orbit
    # direction, isotropic, so the kernel of omega on T Z is all of it.
    from hamcheck.cli import load_models

    sphere = load_models(str(MODELS / "sphere.py"))[0]
    red = hamcheck.reduce(sphere, [0.5], ["L3"], samples=4)
    assert red.dim == 0 and red.kernel_is_orbit
