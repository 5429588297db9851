"""Ivan Moreau, homework 3 (left an experiment at the bottom of the file: it never ends)."""

import jax.numpy as jnp
import numpy as np

import hamcheck
from _starter import CANONICAL, ROTATIONS_ABOUT_Z, SO3, B, magnetic_form, rotate_both

part_a = hamcheck.Model(
    "ivan-A", 6, form=lambda x: jnp.asarray(CANONICAL), algebra=SO3,
    moment=lambda x: jnp.cross(x[:3], x[3:]), action=rotate_both,
)


def magnetic_moment(x):
    q1, q2, _, p1, p2, _ = x
    return jnp.array([q1 * p2 - q2 * p1 - B * (q1**2 + q2**2) / 2])


part_b = hamcheck.Model(
    "ivan-B", 6, form=magnetic_form(lambda q: B), algebra=ROTATIONS_ABOUT_Z, moment=magnetic_moment,
    action=rotate_both,
)

# experiment: rotate a point about z in small steps until |q| drifts by less than 1e-300
q = np.array([1.0, 0.0, 0.0])
step = np.array([[np.cos(1e-3), -np.sin(1e-3), 0.0], [np.sin(1e-3), np.cos(1e-3), 0.0], [0.0, 0.0, 1.0]])
drift = 1.0
while drift > 1e-300:  # mistake: round-off keeps the drift near 1e-16, the loop never ends
    q = step @ q
    drift = abs(np.linalg.norm(q) - 1.0) + 1e-17
