"""An invented scenario: a rubber sheet that was measured to bulge like a sphere.

A student proposes u = log(2 / (1 + |z|^2)) as a hyperbolic metric on the disk;
`hamcheck disk examples/hyperbolic/sagging_sheet.py` says the curvature has the
wrong sign and the rim is not at infinity.
"""

import jax.numpy as jnp


def u(x, y):
    return jnp.log(2.0 / (1.0 + x * x + y * y))
