"""Hyperbolic metrics on the disk and their boundary Hill potentials.

A metric ``g = e^{2u}|dz|^2`` on the unit disk with cone points is validated
(:func:`check_metric`), sent to its boundary Hill potential by the moment map
(:func:`boundary_potential`, ``T = c/4 - c z^2 q``), and its Virasoro orbit is
classified (:func:`classify_metric`). :func:`cone_metric` solves disks with
several cone points two independent ways (:func:`compare_methods`), and
:func:`check_root` tests that method B's root is the metric's (its developing
map keeps one half-plane; :func:`developing_u` is the metric it defines).

>>> from hamcheck import hyperbolic
>>> d = hyperbolic.classify_metric(hyperbolic.cone_disk(3.0), c=1.0)
>>> round(d["representative"], 12) == round((3.0 / (2 * 3.141592653589793))**2 / 4, 12)
True
"""

from ._common import Cone, Estimate
from .accessory import AccessorySolution, solve_accessory
from .boundary import BoundaryPotential, boundary_potential, classify_metric, residues_from_u
from .chart import Chart, two_cone_chart
from .cone_metrics import Agreement, compare_methods, cone_metric, method_a
from .developing import RootCheck, check_root, developing_u
from .liouville import LiouvilleSolution, solve_liouville
from .metric import Metric, cone_disk, poincare_disk, poincare_distance
from .quadratic import AccessoryFamily, RationalQ
from .validation import check_metric

__all__ = [
    "AccessoryFamily", "AccessorySolution", "Agreement", "BoundaryPotential", "Chart", "Cone", "Estimate",
    "LiouvilleSolution", "Metric", "RationalQ", "RootCheck", "boundary_potential", "check_metric", "check_root",
    "classify_metric", "compare_methods", "cone_disk", "cone_metric", "developing_u", "method_a", "poincare_disk",
    "poincare_distance",
    "residues_from_u", "solve_accessory", "solve_liouville", "two_cone_chart",
]
