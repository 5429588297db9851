"""hamcheck: numerical checks of Hamiltonian G-spaces (float64 jax autodiff, CPU).

Declare a chart, a two-form, a Lie algebra action and a moment map as Python
functions; :func:`check` tests every axiom at sampled points and says what is
wrong and how to fix it. Passing checks at sample points are strong evidence,
not a proof.

Importing hamcheck turns on ``jax_enable_x64`` (float64); nothing else in jax's
configuration is changed.
"""

from .algebra import LieAlgebra
from .checks import CHECK_NAMES, FINDING_KINDS
from .errors import ConvergenceError, FrozenModelError, HamcheckError, LoadError, ModelError, UsageError
from .model import Convention, Model
from .numerics import FINITE_DIFFERENCE_TOLERANCES, TOLERANCES, Tolerances
from .report import CheckResult, Finding, Report
from .checks.run import Settings, check
from .orbits import coadjoint_orbit
from .consequences import fixed_points, flow, lattice_count, localization, moment_image, reduce
from .sweeps import SweepTable, sweep

__version__ = "0.1.0"

__all__ = [  # one list, sorted without regard to case
    "check",
    "CHECK_NAMES",
    "CheckResult",
    "coadjoint_orbit",
    "Convention",
    "ConvergenceError",
    "Finding",
    "FINDING_KINDS",
    "FINITE_DIFFERENCE_TOLERANCES",
    "fixed_points",
    "flow",
    "FrozenModelError",
    "HamcheckError",
    "lattice_count",
    "LieAlgebra",
    "LoadError",
    "localization",
    "Model",
    "ModelError",
    "moment_image",
    "reduce",
    "Report",
    "Settings",
    "sweep",
    "SweepTable",
    "Tolerances",
    "TOLERANCES",
    "UsageError",
]
