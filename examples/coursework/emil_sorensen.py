"""Emil Sorensen, homework 3 (Part A: adds a constant "spin" along z to the angular momentum)."""

import jax.numpy as jnp

import hamcheck
from _starter import CANONICAL, ROTATIONS_ABOUT_Z, SO3, B, magnetic_form, rotate_both

SPIN = jnp.array([0.0, 0.0, 0.5])

part_a = hamcheck.Model(
    "emil-A", 6, form=lambda x: jnp.asarray(CANONICAL), algebra=SO3,
    moment=lambda x: jnp.cross(x[:3], x[3:]) + SPIN,  # mistake: d mu is right, equivariance is not
    action=rotate_both,
)


def magnetic_moment(x):
    q1, q2, _, p1, p2, _ = x
    # a constant shift here is harmless: rotations about z form an abelian group
    return jnp.array([q1 * p2 - q2 * p1 - B * (q1**2 + q2**2) / 2 + 0.5])


part_b = hamcheck.Model(
    "emil-B", 6, form=magnetic_form(lambda q: B), algebra=ROTATIONS_ABOUT_Z, moment=magnetic_moment,
    action=rotate_both,
)
