"""Truncated coadjoint orbits of the SU(2) loop group at level c (hamcheck.loop_groups).

The orbit of the constant connection ``a e_3`` under the level-c gauge action
``g . A = g A g^-1 + c g' g^-1``, in the chart ``A(x) = exp(X_x) . (a e_3)``
with ``X_x`` a trigonometric polynomial; the form is the exact pull-back of
the Kirillov–Kostant–Souriau form (docs/references.md, Loop groups), the acting torus is the
constant loops ``exp(t e_3)`` and the rotation of the circle. ``a/c`` is kept
away from integers, where the form degenerates (orbit_model warns there).
"""

from hamcheck.loop_groups import orbit_model

#: modes 0..1 (dim 8), quadrature on 32 points: round-off residuals (docs/references.md, Loop groups)
loop_orbit_small = orbit_model(0.3, 1.0, 1, grid=32, name="loop_orbit_small")

#: modes 0..2 (dim 14) at level 2.5 with a/c = 0.74
loop_orbit_level = orbit_model(1.85, 2.5, 2, grid=48, name="loop_orbit_level")
