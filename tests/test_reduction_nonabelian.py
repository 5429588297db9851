"""Reduced volumes for SO(3) and SU(2): polygon spaces against their published volumes."""

import math
import sys
from pathlib import Path

import jax.numpy as jnp
import numpy as np
import pytest

import hamcheck

MODELS = Path(__file__).resolve().parent.parent / "models"
if str(MODELS) not in sys.path:
    sys.path.insert(0, str(MODELS))
import polygons  # noqa: E402  (models/polygons.py)

PAULI = [np.array([[0, 1], [1, 0]], complex), np.array([[0, -1j], [1j, 0]]), np.array([[1, 0], [0, -1]], complex)]

# Kapovich-Millson 1996 (bending flows; volume formula from memory, docs/references.md F7b): the space of
# quadrilaterals with sides (1, 1.4, 0.8, 1.1) has volume 3 pi, the equilateral pentagons 10 pi^2.
PUBLISHED = [([1.0, 1.4, 0.8, 1.1], 3 * math.pi, 2), ([1.0] * 5, 10 * math.pi ** 2, 4)]


@pytest.mark.parametrize("radii, volume, dim", PUBLISHED, ids=["quadrilateral", "pentagon"])
def test_polygon_space_volume_matches_the_published_value(radii, volume, dim):
    red = hamcheck.reduce(polygons.build(radii), [0.0, 0.0, 0.0])
    assert red.regular and red.locally_free and red.kernel_is_orbit and red.dim == dim
    assert abs(red.volume - volume) <= 1e-3 * volume  # the bar ...
    assert abs(red.volume - volume) <= red.volume_error + 1e-14 * volume  # ... and the error estimate covers it
    assert red.volume_error < 1e-9 * volume
    # two maximal tori, different fixed points, one volume; and the QMC Laplace transform confirms the DH data
    assert len(red.volume_estimates) == 2
    a, b = red.volume_estimates
    assert abs(a.value - b.value) <= 1e-9 * volume
    assert "localization" in red.volume_method and "confirms" in red.volume_method


def _adjoint(U):
    """SU(2) -> SO(3): the rotation of R^3 = span(i sigma_k / 2) by conjugation (common practice)."""
    basis = [1j * s / 2 for s in PAULI]
    cols = []
    for Ek in basis:
        M = U @ jnp.asarray(Ek) @ jnp.conj(U).T
        # coordinates in the basis i sigma_j / 2: c_j = -2 i tr(sigma_j M) / 2 ... = tr(M (i sigma_j / 2)^H) * 2
        cols.append(jnp.stack([jnp.real(2 * jnp.trace(M @ jnp.conj(jnp.asarray(Ej)).T)) for Ej in basis]))
    return jnp.stack(cols, axis=1)


def test_su2_acting_through_so3_gives_the_same_space():
    # -1 in SU(2) acts trivially, so the circle of the torus has period 2 pi on the space, not 4 pi;
    # mu^{-1}(0)/SU(2) is the same quadrilateral space (volume 3 pi, Kapovich-Millson 1996, from memory).
    su2 = hamcheck.LieAlgebra.from_matrices([1j * s / 2 for s in PAULI], names=["S1", "S2", "S3"])
    m = polygons.build([1.0, 1.4, 0.8, 1.1], name="quadrilateral under SU(2)", algebra=su2, represent=_adjoint)
    red = hamcheck.reduce(m, [0.0, 0.0, 0.0])
    assert "kernel of order 2" in red.volume_method
    assert abs(red.volume - 3 * math.pi) <= red.volume_error + 1e-12


def test_a_chart_with_a_shifted_moment_map_is_refused_not_reported():
    # Negative control: the stereographic chart's moment map is off by a constant along the third axis, so the
    # fixed-point values (all of them in that chart) disagree with the integral over the main chart.
    good = polygons.build([1.0, 1.4, 0.8, 1.1])
    st = good.charts[0]
    shift = jnp.array([0.0, 0.0, 0.3])
    bad = hamcheck.Model(
        "shifted stereographic", st.dim, form=st.form, algebra=st.algebra, moment=lambda w: st.moment(w) + shift,
        action=st.action, sample=st.sample, embedding=st.embedding,
    )
    red = hamcheck.reduce(good.replace(charts=(bad,)), [0.0, 0.0, 0.0])
    assert red.volume is None
    assert red.volume_method.startswith("not computed: the two maximal tori give different volumes")


def test_a_chart_whose_action_turns_twice_as_fast_is_refused_by_the_atlas():
    # Negative control: in the stereographic chart exp(t xi) acts as exp(2 t xi), so every weight there doubles;
    # the fixed points both charts see (those of the second torus) then disagree, and reduce says so.
    good = polygons.build([1.0, 1.4, 0.8, 1.1])
    st = good.charts[0]
    bad = hamcheck.Model(
        "fast stereographic", st.dim, form=st.form, algebra=st.algebra, moment=st.moment,
        action=lambda g, w: st.action(g @ g, w), sample=st.sample, embedding=st.embedding,
    )
    with pytest.raises(hamcheck.ModelError, match="disagree at the same fixed point"):
        hamcheck.reduce(good.replace(charts=(bad,)), [0.0, 0.0, 0.0])


def test_the_laplace_cross_check_catches_wrong_weights():
    # Negative control for the independent check: doubled weights at every fixed point (half the DH density)
    # contradict the quasi-Monte-Carlo integral of exp(s <mu, h>) over the main chart.
    from dataclasses import replace

    from hamcheck.consequences._nonabelian import _laplace_check

    m = polygons.build([1.0, 1.4, 0.8, 1.1])
    fps = hamcheck.fixed_points(m, [0.0, 0.0, 1.0], starts=256)
    assert fps.complete and len(fps) == 16
    assert _laplace_check(m, fps, 4, 0)[0] is True
    doubled = replace(fps, points=tuple(replace(p, weights=tuple(2 * w for w in p.weights)) for p in fps))
    ok, note = _laplace_check(m, doubled, 4, 0)
    assert ok is False and "fail localization" in note


def test_the_stereographic_chart_passes_its_own_checks():
    st = polygons.build([1.0, 1.4, 0.8, 1.1]).charts[0]
    assert hamcheck.check(st, points=16, seed=2).passed
