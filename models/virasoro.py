"""Virasoro coadjoint orbits in Fourier-truncated charts (hamcheck.virasoro; docs/references.md, Virasoro).

Invented scenario: a flexible ring resonator whose shape is a reparametrisation
F of the circle; its "tension profile" T = Phi_F T0 lies on the coadjoint orbit
of a constant T0 at central charge c. Both charts are small (dim 4) to keep
``hamcheck check models/virasoro.py`` quick.

* ``ring_orbit``: T0 = 0.1, c = 1 (elliptic orbit, rho = sqrt(0.1)), modes 1, 2.
* ``sl2_orbit``: T0 = c/4 with c = 2 (the orbit Diff(S^1)/PSL(2, R)), modes 2, 3
  (mode 1 is degenerate there and is left out).

Convention: hamcheck.Convention(sign=+1, flow=+1) with mu = int T dtheta for the
rotation (see hamcheck.virasoro's module docstring).
"""

from hamcheck.virasoro import orbit_model

ring_orbit = orbit_model(0.1, 1.0, [1, 2], name="virasoro-ring-orbit")
sl2_orbit = orbit_model(0.5, 2.0, [2, 3], name="virasoro-sl2-orbit")
