"""Deliberately broken models: one per kind of finding, to see each diagnosis.

Run ``hamcheck check models/broken/`` and read the findings. Each model's
name says what was planted.
"""

import sys
from pathlib import Path

import jax
import jax.numpy as jnp
import numpy as np

import hamcheck

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
import half_plane  # noqa: E402  (the correct models one folder up)
import sphere  # noqa: E402

J2 = jnp.array([[0.0, 1.0], [-1.0, 0.0]])
ROTATION = hamcheck.LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])], names=["rot"])


def sphere_fields(x):
    """X_a = D(chart)(p) (e_a x p): the SO(3) vector fields pushed to the chart."""
    p = sphere.to_sphere(x)
    rows = [jax.jvp(sphere.to_chart, (p,), (jnp.cross(e, p),))[1] for e in jnp.eye(3)]
    return jnp.stack(rows)


# moment-sign: mu = -p for the area form of the outward normal
sign_flipped = sphere.build("sphere: moment map with the wrong sign", moment=lambda x: -sphere.to_sphere(x))

# moment-scale: mu doubled (the usual factor-2 slip between omega and mu)
doubled = sphere.build("sphere: moment map doubled", moment=lambda x: 2 * sphere.to_sphere(x))

# moment-offset: a constant shift breaks equivariance for the non-abelian SO(3)
shifted = sphere.build(
    "sphere: moment map shifted by a constant", moment=lambda x: sphere.to_sphere(x) + jnp.array([0.3, 0.0, -0.2])
)

# right-action: rotating by g^T = g^-1 composes the wrong way round
right_action = sphere.build("sphere: right action", action=lambda g, x: sphere.rotate(g.T, x))

# bracket-sign: vector fields of exp(-t xi) declared with the default flow=+1
bracket_flipped = hamcheck.Model(
    "sphere: vector fields with the opposite flow sign",
    2,
    form=sphere.area_form,
    algebra=sphere.SO3,
    moment=sphere.to_sphere,
    vector_fields=lambda x: -sphere_fields(x),
)

# fields-mismatch: supplied vector fields twice those of the action
fields_mismatch = sphere.build("sphere: vector fields off by 2", vector_fields=lambda x: 2 * sphere_fields(x))

# not-antisymmetric: a symmetric part slipped into the matrix
not_antisymmetric = sphere.build(
    "sphere: form with a symmetric part", form=lambda x: sphere.area_form(x) + 0.1 * jnp.eye(2)
)

# non-finite: the moment map is undefined on part of the sampled chart
partly_undefined = sphere.build(
    "sphere: moment map undefined for x1 > 1",
    moment=lambda x: sphere.to_sphere(x) * jnp.where(x[0] > 1, jnp.nan, 1.0),
)

# central-cocycle: translations of the plane with mu = (y, -x): the Heisenberg extension
TRANSLATIONS = hamcheck.LieAlgebra.from_matrices(
    [np.array([[0.0, 0, 1], [0, 0, 0], [0, 0, 0]]), np.array([[0.0, 0, 0], [0, 0, 1], [0, 0, 0]])], names=["dx", "dy"]
)
translations = hamcheck.Model(
    "plane: translations (moment map needs a central extension)",
    2,
    form=lambda x: J2,
    algebra=TRANSLATIONS,
    moment=lambda x: jnp.array([x[1], -x[0]]),
    action=lambda g, x: (g @ jnp.array([x[0], x[1], 1.0]))[:2],
)

# not-closed: (1 + x4) dx1^dx2 + dx3^dx4 on R^4 with rotations of the (x1, x2) plane
ROT_12 = hamcheck.LieAlgebra.from_matrices(
    [np.block([[np.array([[0.0, -1.0], [1.0, 0.0]]), np.zeros((2, 2))], [np.zeros((2, 2)), np.zeros((2, 2))]])],
    names=["rot12"],
)
not_closed = hamcheck.Model(
    "R4: form that is not closed",
    4,
    form=lambda x: jnp.block([[(1 + x[3]) * J2, jnp.zeros((2, 2))], [jnp.zeros((2, 2)), J2]]),
    algebra=ROT_12,
    moment=lambda x: jnp.array([-(1 + x[3]) * (x[0] ** 2 + x[1] ** 2) / 2]),
    action=lambda g, x: g @ x,
    sample=lambda rng: rng.uniform(-0.5, 0.5, 4),
)

# not-invariant: (1 + x^2) dx^dy is closed but rotations do not preserve it
not_invariant = hamcheck.Model(
    "plane: form not preserved by the rotations",
    2,
    form=lambda x: (1 + x[0] ** 2) * J2,
    algebra=ROTATION,
    moment=lambda x: jnp.array([-(x[0] ** 2 + x[1] ** 2) / 2]),
    action=lambda g, x: g @ x,
)

# degenerate: x dx^dy vanishes on the line x = 0 (only the search lands there)
VERTICAL = hamcheck.LieAlgebra.from_matrices([np.array([[0.0, 0, 0], [0, 0, 1], [0, 0, 0]])], names=["dy"])
degenerate = hamcheck.Model(
    "plane: form degenerate on a line",
    2,
    form=lambda x: x[0] * J2,
    algebra=VERTICAL,
    moment=lambda x: jnp.array([-x[0] ** 2 / 2]),
    action=lambda g, x: (g @ jnp.array([x[0], x[1], 1.0]))[:2],
    sample=lambda rng: np.array([rng.uniform(0.2, 2.0) * rng.choice([-1, 1]), rng.standard_normal()]),
)

# moment-scale with mixed factors: the half-plane with mu^E negated
half_plane_mixed = hamcheck.Model(
    "half-plane: one component with the wrong sign",
    2,
    form=half_plane.form,
    algebra=half_plane.SL2,
    moment=lambda x: half_plane.moment(x) * jnp.array([1.0, -1.0, 1.0]),
    action=half_plane.mobius,
    sample=half_plane.sample,
)
