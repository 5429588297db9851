"""Virasoro coadjoint orbits: Hill potentials, Schwarzian, monodromy, orbit charts, localization.

==================  ====================================================================
module              what lives there
==================  ====================================================================
``diffeomorphisms`` lifted diffeomorphisms, the Schwarzian, ``Phi_F``, ``delta``, bracket, GF
``hill``            monodromy, class, rotation number, stabilizers, :func:`classify`
``orbit_chart``     :func:`orbit_model`, the base-form check, the resolution study
``truncated``       the truncated algebra and checks of a user's truncated action
``localization``    rotation weights and the regularised one-loop factor
``stability``       :func:`stability_chart`: classes over a parameter plane (Dask when given)
``tolerances``      :data:`TOLERANCES`
==================  ====================================================================

Conventions (docs/references.md, Virasoro)
------------------------------------------
* Circle ``R/2piZ``, coordinate ``theta``; coadjoint vectors ``(T, c)``, T a
  2pi-periodic function (a quadratic differential ``T dtheta^2``); Hill operator
  ``c d^2/dtheta^2 + T``. Pairing ``<(T, c), (X, a)> = int_0^{2pi} T X dtheta + c a``.
* Lifted diffeomorphisms ``F(theta + 2pi) = F(theta) + 2pi``, ``F' > 0``, act by
  the pullback ``Phi_F T = (T o F) F'^2 + (c/2) S(F)``, with the Schwarzian
  ``S(F) = F'''/F' - (3/2)(F''/F')^2``. Phi is a RIGHT action:
  ``Phi_G Phi_F = Phi_{F o G}``; the left coadjoint action is ``Phi_{F^-1}``.
* ``delta_X T = d/dt Phi_{theta + tX} T = X T' + 2 X' T + (c/2) X'''``.
* Bracket ``[X, Y] = X'Y - XY'`` (minus the usual vector-field bracket), for
  which ``X -> delta_X`` is a homomorphism.
* Gelfand–Fuchs cocycle ``GF(X, Y) = (1/2) int X' Y'' = (1/2) int X''' Y``;
  ``<delta_X T, Y> = <T, [X, Y]> + c GF(X, Y)``.

Converting from other normalisations
------------------------------------
* ``c/12`` convention (``Phi_F T = (T o F)F'^2 + (c/12) S(F)``, common in CFT):
  use ``c_here = c_there / 6``. ``c/24`` convention: ``c_here = c_there / 12``.
  A Hill equation written ``psi'' + u psi = 0`` is ``c = 1, T = u``; the
  Schrödinger form ``-psi'' + u psi = 0`` is ``c = 1, T = -u`` (only ``T/c``
  enters the monodromy and the class).
* The usual vector-field bracket ``[X d, Y d] = (XY' - X'Y) d`` is ``-[X, Y]``
  here; with it, ``delta`` is an anti-homomorphism (declare ``sign=-1`` in
  :func:`hamcheck.circle.check_coadjoint_action`).
* Complex modes ``X_m = e^{i m theta}``: ``[X_m, X_n] = i(m - n) X_{m+n}``,
  ``GF(X_m, X_n) = -i pi m^3 delta_{m+n,0}``.

Orbit chart and model convention
--------------------------------
:func:`orbit_model` (module ``orbit_chart``) pulls the KKS form back exactly to
a Fourier-truncated chart of diffeomorphisms; the rotations act with moment
map ``int T dtheta`` in ``Convention(sign=+1, flow=+1)`` (derivation in that
module's docstring).

Example
-------
>>> from hamcheck import virasoro
>>> inv = virasoro.classify(1.0, c=1.0)          # T0/c = 1 = n^2/4 with n = 2
>>> inv.orbit_class, inv.stabilizer_dim
('+identity', 3)
"""

import warnings as _warnings

from .diffeomorphisms import Diffeo, bracket, delta, gelfand_fuchs, schwarzian, schwarzian_from_derivatives, transform
from .hill import (
    Monodromy,
    classify,
    classify_file,
    constant_representative,
    developing_map,
    format_classification,
    hill_generator,
    monodromy,
    potential_from_developing_map,
    rotation_number,
    stabilizer_fourier,
    stabilizer_ode,
)
from .localization import counterterm_limit, counterterm_sum, rotation_weights, zeta_one_loop
from .orbit_chart import VirasoroOrbitChart, base_form_check, base_form_residual, chart_resolution_study, kks_base_form, orbit_model
from .tolerances import TOLERANCES, VirasoroTolerances
from .truncated import TruncatedVirasoro, check_user_action, truncated_algebra
from .stability import StabilityChart, stability_chart

from . import diffeomorphisms, hill, localization, orbit_chart, stability, tolerances, truncated

__all__ = [
    *diffeomorphisms.__all__,
    *truncated.__all__,
    *hill.__all__,
    *orbit_chart.__all__,
    *localization.__all__,
    *tolerances.__all__,
    "StabilityChart",
    "stability_chart",
]

#: former module-level tolerances, now fields of TOLERANCES (one release of grace)
_MOVED = {"MONODROMY_TOL": ("virasoro", "monodromy"), "CLASS_TOL": ("virasoro", "trace_class"),
          "BASE_FORM_TOL": ("virasoro", "base_form"), "STABILIZER_TOL": ("circle", "stabilizer")}


def __getattr__(name):
    if name in _MOVED:
        where, field = _MOVED[name]
        _warnings.warn(f"virasoro.{name} is deprecated; use {where}.TOLERANCES.{field}", DeprecationWarning, stacklevel=2)
        from .. import circle

        return getattr(TOLERANCES if where == "virasoro" else circle.TOLERANCES, field)
    if name == "add_classify_parser":
        _warnings.warn("virasoro.add_classify_parser moved to hamcheck.cli", DeprecationWarning, stacklevel=2)
        from ..cli import add_classify_parser

        return add_classify_parser
    raise AttributeError(f"module 'hamcheck.virasoro' has no attribute {name!r}")
