"""Deprecated alias of :mod:`hamcheck.loop_groups` (kept for one release).

``from hamcheck import affine`` warns (``DeprecationWarning``) and gives the
same names as before: every function and class of :mod:`hamcheck.loop_groups`,
the former tolerance constants (now fields of ``loop_groups.TOLERANCES`` and
``circle.TOLERANCES``) and ``add_holonomy_parser`` (now in :mod:`hamcheck.cli`).
"""

import warnings

from .circle import TOLERANCES as _CIRCLE
from .cli import add_holonomy_parser
from .loop_groups import *  # noqa: F401,F403
from .loop_groups import TOLERANCES as _LOOPS
from .loop_groups import __all__ as _loop_names

warnings.warn(
    "hamcheck.affine is deprecated and will be removed in the next release; import hamcheck.loop_groups",
    DeprecationWarning,
    stacklevel=2,
)

#: former module-level tolerances (read these from the TOLERANCES records instead)
STABILIZER_RTOL = _CIRCLE.stabilizer
HOLONOMY_TOL = _LOOPS.holonomy
GAUGE_ACTION_TOL = _LOOPS.gauge_action
PAIRING_TOL = _LOOPS.pairing

__all__ = [n for n in _loop_names if n not in ("LoopGroupTolerances", "TOLERANCES")] + [
    "STABILIZER_RTOL",
    "HOLONOMY_TOL",
    "GAUGE_ACTION_TOL",
    "PAIRING_TOL",
    "add_holonomy_parser",
]
