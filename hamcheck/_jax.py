"""Single place where hamcheck touches jax's global configuration.

hamcheck computes in float64: round-off floors near 1e-16 are what make the
default tolerances (see ``numerics.py``) meaningful. jax defaults to float32,
so importing hamcheck switches ``jax_enable_x64`` on. The other global setting
is jax's persistent compilation cache, turned on in hamcheck's own folder unless
the user configured one or set ``HAMCHECK_CACHE_DIR=`` (see :mod:`hamcheck.cache`);
platform and devices are left as the user set them.
"""

import jax

if not jax.config.read("jax_enable_x64"):
    jax.config.update("jax_enable_x64", True)

import jax.numpy as jnp

from .cache import configure_persistent_cache

configure_persistent_cache(jax)

__all__ = ["jax", "jnp"]
