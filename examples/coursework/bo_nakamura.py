"""Bo Nakamura, homework 3 (correct: Bo's textbook uses iota_X omega = -d mu, and says so).

With the opposite sign convention every moment map changes sign; declaring
Convention(sign=-1) makes p x q the right answer.
"""

import jax.numpy as jnp

import hamcheck
from _starter import CANONICAL, ROTATIONS_ABOUT_Z, SO3, B, magnetic_form, rotate_both

MY_BOOK = hamcheck.Convention(sign=-1)

part_a = hamcheck.Model(
    "bo-A", 6, form=lambda x: jnp.asarray(CANONICAL), algebra=SO3,
    moment=lambda x: jnp.cross(x[3:], x[:3]),  # p x q
    action=rotate_both, convention=MY_BOOK,
)


def magnetic_moment(x):
    q1, q2, _, p1, p2, _ = x
    return jnp.array([q2 * p1 - q1 * p2 + B * (q1**2 + q2**2) / 2])


part_b = hamcheck.Model(
    "bo-B", 6, form=magnetic_form(lambda q: B), algebra=ROTATIONS_ABOUT_Z, moment=magnetic_moment,
    action=rotate_both, convention=MY_BOOK,
)
