"""Ada Lindqvist, homework 3 (both parts correct)."""

import jax.numpy as jnp

import hamcheck
from _starter import CANONICAL, ROTATIONS_ABOUT_Z, SO3, B, magnetic_form, rotate_both


def angular_momentum(x):
    return jnp.cross(x[:3], x[3:])  # mu = q x p


part_a = hamcheck.Model(
    "ada-A", 6, form=lambda x: jnp.asarray(CANONICAL), algebra=SO3, moment=angular_momentum, action=rotate_both
)


def magnetic_moment(x):
    q1, q2, _, p1, p2, _ = x
    return jnp.array([q1 * p2 - q2 * p1 - B * (q1**2 + q2**2) / 2])


part_b = hamcheck.Model(
    "ada-B", 6, form=magnetic_form(lambda q: B), algebra=ROTATIONS_ABOUT_Z, moment=magnetic_moment,
    action=rotate_both,
)
