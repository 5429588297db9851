"""Julia Brandt, homework 3 (imports the course helper under a name it does not have)."""

import jax.numpy as jnp

import hamcheck
from _starter import CANONICAL, SO3, rotate_both
from _starter import magnetic_two_form  # mistake: the starter calls it magnetic_form

part_a = hamcheck.Model(
    "julia-A", 6, form=lambda x: jnp.asarray(CANONICAL), algebra=SO3,
    moment=lambda x: jnp.cross(x[:3], x[3:]), action=rotate_both,
)
