"""Farah Haddad, homework 3 (Part A: rotates by the transpose, a right action)."""

import jax.numpy as jnp

import hamcheck
from _starter import CANONICAL, ROTATIONS_ABOUT_Z, SO3, B, magnetic_form, rotate_both


def rotate_transposed(g, x):
    return jnp.concatenate([g.T @ x[:3], g.T @ x[3:]])  # mistake: (gh)^T = h^T g^T composes backwards


part_a = hamcheck.Model(
    "farah-A", 6, form=lambda x: jnp.asarray(CANONICAL), algebra=SO3,
    moment=lambda x: jnp.cross(x[:3], x[3:]), action=rotate_transposed,
)


def magnetic_moment(x):
    q1, q2, _, p1, p2, _ = x
    return jnp.array([q1 * p2 - q2 * p1 - B * (q1**2 + q2**2) / 2])


part_b = hamcheck.Model(
    "farah-B", 6, form=magnetic_form(lambda q: B), algebra=ROTATIONS_ABOUT_Z, moment=magnetic_moment,
    action=rotate_both,
)
