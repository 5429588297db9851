"""Dora Petrova, homework 3 (Part A: "dq ^ dp = dq (x) dp - dp (x) dq", so every entry got a 2)."""

import jax.numpy as jnp

import hamcheck
from _starter import CANONICAL, ROTATIONS_ABOUT_Z, SO3, B, magnetic_form, rotate_both

part_a = hamcheck.Model(
    "dora-A", 6, form=lambda x: 2 * jnp.asarray(CANONICAL),  # mistake: factor 2 in the form only
    algebra=SO3, moment=lambda x: jnp.cross(x[:3], x[3:]), action=rotate_both,
)


def magnetic_moment(x):
    q1, q2, _, p1, p2, _ = x
    return jnp.array([q1 * p2 - q2 * p1 - B * (q1**2 + q2**2) / 2])


part_b = hamcheck.Model(
    "dora-B", 6, form=magnetic_form(lambda q: B), algebra=ROTATIONS_ABOUT_Z, moment=magnetic_moment,
    action=rotate_both,
)
