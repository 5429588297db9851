"""moment_image: convexity (Atiyah; Guillemin-Sternberg) and the DH density.

Reference: docs/references.md row F3 (CP^n image = simplex conv{0, -e_k/2}).
"""

import numpy as np
import pytest

import hamcheck
from test_fixed_points import cpn


@pytest.fixture(scope="module")
def cp2():
    return cpn(2)


def test_cp2_image_is_the_simplex_and_dh_matches(cp2, tmp_path):
    img = hamcheck.moment_image(cp2, ["t1", "t2"], samples=2**13, starts=16)
    # docs/references.md row F3: vertices 0, -e_1/2, -e_2/2
    verts = sorted(map(tuple, np.round(img.fixed_images, 12)))
    assert verts == [(-0.5, 0.0), (0.0, -0.5), (0.0, 0.0)]
    assert img.inside_fraction == 1.0 and img.fill > 0.9 and img.convex
    # weighted histogram of 8192 Sobol points in 24 bins: measured error 0.11; 0.25 leaves room for the seed
    assert img.dh_error < 0.25
    path = img.plot(tmp_path / "cp2.png")
    assert (tmp_path / "cp2.png").stat().st_size > 10_000 and path.endswith(".png")


def test_planted_moment_factor_breaks_dh(cp2):
    # negative control: mu doubled -> images still convex, but the DH prediction (weights from the action)
    # no longer matches the Liouville histogram
    bad = cpn(2, mu_factor=2.0, name="CP2 mu*2")
    img = hamcheck.moment_image(bad, ["t1", "t2"], samples=2**13, starts=16)
    assert img.dh_error > 0.4
