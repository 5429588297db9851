"""Single place where hamcheck touches jax's global configuration.

hamcheck computes in float64: round-off floors near 1e-16 are what make the
default tolerances (see ``numerics.py``) meaningful. jax defaults to float32,
so importing hamcheck switches ``jax_enable_x64`` on. That is the only global
setting changed; platform, devices and caches are left as the user set them.
"""

import jax

if not jax.config.read("jax_enable_x64"):
    jax.config.update("jax_enable_x64", True)

import jax.numpy as jnp

__all__ = ["jax", "jnp"]
