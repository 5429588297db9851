"""Loop groups acting on connections on the circle (level-c gauge action).

=================  =========================================================================
module             what lives there
=================  =========================================================================
``groups``         compact matrix groups (SU(2), SO(3), U(1), SU(n)), loops, constant connections
``connections``    the gauge action, its infinitesimal form, pairing, cocycle, a user's finite action
``holonomy``       holonomy, its class, the stabilizer two ways, :func:`classify`
``orbit_chart``    the truncated orbit chart of ``a e_3`` (jax) and its resolution study
``truncated``      the truncated loop algebra and checks of a user's infinitesimal action
``tolerances``     :data:`TOLERANCES`
=================  =========================================================================

Conventions (docs/references.md, Loop groups; Pressley–Segal, *Loop Groups*,
ch. 4, from memory):

* SU(2) basis ``e_k = -i sigma_k / 2``, ``[e_j, e_k] = eps_jkl e_l``, inner
  product ``<X, Y> = -tr(XY)`` (so ``<e_j, e_k> = delta_jk / 2``); other groups
  use ``<X, Y> = -scale * tr(XY)`` with the scale stated on the group.
* Circle coordinate ``theta`` in ``[0, 2pi)``; functions on the circle are
  samples on the uniform grid ``theta_m = 2 pi m / M`` (:mod:`hamcheck.circle`).
* Connections ``A dtheta`` are arrays ``(M, d)`` of coordinates in the
  algebra's basis. Level-c gauge action (a LEFT action)
  ``g . A = g A g^-1 + c g' g^-1``; infinitesimally ``delta_xi A = [xi, A] + c xi'``
  and ``int <delta_xi A, eta> = -(int <A, [xi, eta]> + c int <xi, eta'>)``.
* Central cocycle ``omega(xi, eta) = c int <xi, eta'> dtheta``; adjoint action
  of the extension ``Ad_g(eta, b) = (g eta g^-1, b - int <g^-1 g', eta>)``.
* Holonomy: parallel transport ``U' = (1/c) A U``, ``U(0) = I``, so
  ``Hol(g . A) = g(0) Hol(A) g(0)^-1``.

Other normalisations convert as follows: a pairing ``<X, Y> = -tr(XY)/2`` or a
cocycle ``(c / 2 pi) int <xi, eta'>`` rescale the level (``c -> 2c`` or
``c -> c / 2 pi``); the action ``g A g^-1 - c g' g^-1`` is the level ``-c``
orbit with transport ``U' = -(1/c) A U``.

Example
-------
>>> import numpy as np
>>> from hamcheck import loop_groups
>>> A = loop_groups.constant_connection(0.3, 64)          # 0.3 e_3 on 64 points
>>> H = loop_groups.holonomy(A, c=1.0)                      # U' = (1/c) A U around the circle
>>> bool(abs(H.trace.real - 2 * np.cos(0.3 * np.pi)) < 1e-12)
True
"""

from .connections import central_cocycle, check_gauge_action, extension_adjoint, gauge_action, infinitesimal_action, pairing
from .groups import SO3, SU, SU2, U1, Loop, MatrixGroup, constant_connection, grid
from .holonomy import (
    Holonomy,
    classify,
    classify_file,
    format_classification,
    holonomy,
    stabilizer_dimension_fourier,
    stabilizer_dimension_transport,
    su2_class,
)
from .orbit_chart import (
    STANDARD,
    ChartFormulas,
    LoopOrbitChart,
    OrbitResolution,
    chart_labels,
    degenerate_modes,
    kks_form_at_base,
    orbit_model,
    orbit_resolution_study,
    su2_Ad,
    su2_dexp,
    summarize_resolution,
)
from .tolerances import TOLERANCES, LoopGroupTolerances
from .truncated import TruncatedLoopAlgebra, check_user_action, truncated_algebra

from . import connections, groups, orbit_chart, tolerances, truncated
from .holonomy import __all__ as _holonomy_names

__all__ = [
    *groups.__all__,
    *connections.__all__,
    *_holonomy_names,
    *orbit_chart.__all__,
    *truncated.__all__,
    *tolerances.__all__,
]
