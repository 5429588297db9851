"""Gabriel Osei, homework 3 (Part B: a field that grows along z, so div B != 0 and omega is not closed)."""

import jax.numpy as jnp

import hamcheck
from _starter import CANONICAL, ROTATIONS_ABOUT_Z, SO3, B, magnetic_form, rotate_both

part_a = hamcheck.Model(
    "gabriel-A", 6, form=lambda x: jnp.asarray(CANONICAL), algebra=SO3,
    moment=lambda x: jnp.cross(x[:3], x[3:]), action=rotate_both,
)


def field(q):
    return B * (1 + q[2])  # mistake: B3 depends on q3, d(B3 dq1 ^ dq2) = B dq3 ^ dq1 ^ dq2


def magnetic_moment(x):
    q1, q2, _, p1, p2, _ = x
    return jnp.array([q1 * p2 - q2 * p1 - field(x[:3]) * (q1**2 + q2**2) / 2])


part_b = hamcheck.Model(
    "gabriel-B", 6, form=magnetic_form(field), algebra=ROTATIONS_ABOUT_Z, moment=magnetic_moment,
    action=rotate_both,
)
