"""What the theory promises from a Hamiltonian G-space, computed on the model.

One module per consequence: :mod:`.flow` (Hamiltonian flows vs the group
action), :mod:`.fixed_points`, :mod:`.localization` (Duistermaat-Heckman /
ABBV), :mod:`.moment_image` (convexity and the DH density), :mod:`.reduction`
(Marsden-Weinstein), :mod:`.lattice` (lattice points vs holomorphic
Lefschetz). :mod:`.integration` holds the chart integrals they share.
"""

from .fixed_points import FixedPoint, FixedPoints, fixed_points
from .flow import Flow, flow
from .lattice import LatticeCount, lattice_count
from .localization import Localization, localization
from .moment_image import MomentImage, moment_image
from .reduction import Reduction, reduce

__all__ = [
    "FixedPoint",
    "FixedPoints",
    "Flow",
    "LatticeCount",
    "Localization",
    "MomentImage",
    "Reduction",
    "fixed_points",
    "flow",
    "lattice_count",
    "localization",
    "moment_image",
    "reduce",
]
