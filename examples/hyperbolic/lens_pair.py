"""An invented scenario: a glass-blower's drum membrane with two pinched seams.

The membrane is modelled as a hyperbolic disk whose rim is infinitely far away;
each seam pinches the surface into a cone point of angle 0.7 x 2 pi. Run

    hamcheck disk examples/hyperbolic/lens_pair.py

to validate the solved metric and see which Virasoro orbit its rim lands on.
"""

import math

c = 1.0
cones = [(-0.35 + 0.1j, 0.7 * 2 * math.pi), (0.3 - 0.05j, 0.7 * 2 * math.pi)]
