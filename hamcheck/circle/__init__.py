"""The circle toolkit shared by both infinite-dimensional families (:mod:`hamcheck.virasoro`, :mod:`hamcheck.loop_groups`).

========================  ============================================================================
module                    what lives there
========================  ============================================================================
``periodic``              grids ``theta_j = 2 pi j / M``, quadrature, spectral derivatives, real mode
                          vectors, :class:`Periodic` (trigonometric polynomials, exact anywhere)
``samples``               the one sample-file loader (.npy / .csv / .py) and :func:`read_input`
``propagator``            the one periodic linear-ODE propagator (Magnus-6, step doubling,
                          :class:`~hamcheck.ConvergenceError` when it cannot reach its target)
``stabilizer``            the one kernel routine (one threshold) and the principal-angle distance
``classification``        :class:`OrbitClassification`, the result of both classifiers
``resolution``            resolution studies: one series, or real ``hamcheck.check`` runs per grid
``cocycles``              a user's truncated coadjoint action and its central term (a ``Report``)
``tolerances``            :data:`TOLERANCES`, every tolerance of the above with its reason
========================  ============================================================================

Example
-------
>>> import numpy as np
>>> from hamcheck import circle
>>> th = circle.grid(32)
>>> bool(np.allclose(circle.derivative(np.sin(3 * th)), 3 * np.cos(3 * th)))
True
"""

import warnings as _warnings

from . import cocycles
from .classification import OrbitClassification
from .cocycles import central_ratio, check_coadjoint_action, is_coboundary
from .periodic import (
    Periodic,
    derivative,
    grid,
    integrate,
    mean,
    mode_vector_to_samples,
    real_modes,
    resample,
    resolution_warning,
    samples_to_mode_vector,
    spectral_tail,
    vector_modes,
    wavenumbers,
)
from .propagator import Propagation, expm_traceless2, magnus6_exponent, magnus_steps, ordered_product, prefix_products, propagate, transport
from .resolution import (
    ChartResolution,
    ResolutionStudy,
    check_resolution_study,
    fit_decay,
    resolution_study,
    summarize_resolution,
)
from .samples import ClassificationInput, LoadedSamples, coupling, load_periodic_samples, read_input
from .stabilizer import Kernel, kernel, subspace_distance
from .tolerances import TOLERANCES, CircleTolerances, ToleranceRecord

from . import classification, periodic, propagator, resolution, samples, stabilizer, tolerances

__all__ = [
    *periodic.__all__,
    *samples.__all__,
    *propagator.__all__,
    *stabilizer.__all__,
    "OrbitClassification",
    *resolution.__all__,
    "cocycles",
    "check_coadjoint_action",
    "central_ratio",
    "is_coboundary",
    *tolerances.__all__,
]

#: former module-level tolerances, now fields of TOLERANCES (one release of grace)
_MOVED = {"ROUND_OFF_FLOOR": "round_off_floor", "STALL_FACTOR": "stall_factor", "UNDERRESOLVED_TAIL": "underresolved_tail"}


def __getattr__(name):
    if name in _MOVED:
        _warnings.warn(f"circle.{name} is deprecated; use circle.TOLERANCES.{_MOVED[name]}", DeprecationWarning, stacklevel=2)
        return getattr(TOLERANCES, _MOVED[name])
    raise AttributeError(f"module 'hamcheck.circle' has no attribute {name!r}")
