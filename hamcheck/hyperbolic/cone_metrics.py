"""``cone_metric``: disks with several cone points (angles below 2 pi), solved two independent ways.

* method B (:mod:`.accessory`): the accessory parameters of the rational q from
  the monodromy condition; gives q, hence the boundary potential, to ~1e-12.
* method A (:mod:`.liouville`): Newton on Liouville's equation for the bounded
  correction v; gives u everywhere (for distances and validation), and its own
  accessory parameters through contour integrals of u (:func:`.boundary.residues_from_u`).

The metric's q is method B's; its u is method A's, solved on first use.
:func:`compare_methods` reports their agreement on q, T and the class.

>>> m = cone_metric([(0.4, 3.0), (-0.4, 3.0)])
>>> m.q is not None
True
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from .. import virasoro
from .._jax import jax
from ._common import as_cones
from .accessory import AccessorySolution, solve_accessory
from .boundary import _family_fit, boundary_potential, residues_from_u
from .liouville import LiouvilleSolution, solve_liouville
from .metric import Metric

#: Default collocation grid of method A (Chebyshev order N, angles M) and the
#: coarser grid whose difference estimates its error.
GRID = (41, 64)
COARSE = (29, 48)

#: Safety factor on method A's measured Liouville residual (at points off its
#: collocation grid) when it becomes the floor of check_metric's tolerance.
FLOOR_FACTOR = 10.0


@dataclass(frozen=True)
class MethodA:
    """Method A on a grid and a coarser one: residues ``b`` and their estimated ``error``."""

    solution: LiouvilleSolution
    coarse: LiouvilleSolution
    b: np.ndarray
    error: float
    liouville_residual: float


def method_a(cones, grid=GRID, coarse=COARSE) -> MethodA:
    cones = as_cones(cones)
    fine = solve_liouville(cones, *grid)
    rough = solve_liouville(cones, *coarse)
    b, ch = residues_from_u(fine.u, cones)
    b2, _ = residues_from_u(rough.u, cones)
    return MethodA(fine, rough, b, float(np.abs(b - b2).max() + ch), _liouville_residual(fine))


def _liouville_residual(sol: LiouvilleSolution, n: int = 64, seed: int = 12345) -> float:
    """Max relative Liouville residual of the interpolant off the grid (away from cones and circle)."""
    from .validation import liouville_residuals, sample_points

    z = sample_points(sol.cones, n, np.random.default_rng(seed))
    return float(np.max(liouville_residuals(sol.u, z)[0]))


class ConeConstruction:
    """What :func:`cone_metric` built: method B now, method A on first use (cached)."""

    def __init__(self, cones, accessory: AccessorySolution, grid):
        self.cones, self.accessory, self.grid = cones, accessory, grid

    @functools.cached_property
    def method_a(self) -> MethodA:
        # the first call of u may come from inside a jax trace (a jitted distance): solve eagerly
        with jax.ensure_compile_time_eval():
            return method_a(self.cones, self.grid, tuple(int(round(g * 0.7)) for g in self.grid))

    def u_change(self, z) -> float:
        """max |u_fine - u_coarse| at points z: method A's error estimate for u (used by distances)."""
        A = self.method_a
        z = np.asarray(z, complex)
        f = [np.asarray(jax.vmap(s.u)(z.real, z.imag)) for s in (A.solution, A.coarse)]
        return float(np.max(np.abs(f[0] - f[1])))

    @property
    def liouville_floor(self) -> float:
        return FLOOR_FACTOR * self.method_a.liouville_residual

    def __repr__(self) -> str:
        return f"ConeConstruction({list(self.cones)}, method B residual {self.accessory.residual:.1e})"


class _LazyU:
    """u of a cone metric: method A's solution, computed on the first call."""

    lazy = True

    def __init__(self, construction: ConeConstruction):
        self.construction = construction

    def __call__(self, x, y):
        return self.construction.method_a.solution.u(x, y)


def cone_metric(cones, *, grid=GRID) -> Metric:
    """The complete hyperbolic metric on the disk with cone points ``[(p, alpha), ...]``, alpha < 2 pi.

    ``q`` from method B (accessory parameters); ``u`` from method A on
    ``grid = (N, M)`` (Chebyshev order, angles), solved when first needed.
    """
    cones = as_cones(cones, below_two_pi=True)
    sol = solve_accessory(cones)
    built = ConeConstruction(cones, sol, tuple(grid))
    name = "cone_metric(" + ", ".join(f"({complex(c.p):.4g}, {c.alpha / math.pi:.4g} pi)" for c in cones) + ")"
    return Metric(_LazyU(built), cones, sol.q, name, 0.0, construction=built)


@dataclass(frozen=True)
class Agreement:
    """Method A against method B: max differences of the residues, of T, and the two classes."""

    residues: float
    residues_error: float  # method A's own estimate (method B's is far smaller)
    potential: float
    potential_error: float
    class_a: str
    class_b: str
    trace_a: float
    trace_b: float

    @property
    def agree(self) -> bool:
        return (self.residues <= 3 * self.residues_error + 1e-12 and self.potential <= 3 * self.potential_error + 1e-12
                and self.class_a == self.class_b)


def compare_methods(cones, *, c: float = 1.0, M: int = 256, grid=GRID) -> Agreement:
    """Solve by both methods and compare q (residues), the boundary potential and the class."""
    metric = cone_metric(cones, grid=grid)
    built = metric.construction
    A = built.method_a
    fam = built.accessory.family
    x, _ = _family_fit(fam, A.b)
    TB = boundary_potential(metric, c, M)
    qa = fam.q(x)
    z = np.exp(1j * 2 * np.pi * np.arange(M) / M)
    TA = np.real(c / 4 - c * z**2 * qa(z))
    bB = np.zeros(len(built.cones), complex)
    bB[list(fam.off)] = built.accessory.b
    dB = float(np.abs(A.b - bB)[list(fam.off)].max(initial=0.0))
    from .boundary import _residue_sensitivity

    eT = abs(c) * A.error * float(_residue_sensitivity(fam, z).max()) + TB.error
    ca, cb = virasoro.classify(TA, c=c), virasoro.classify(np.asarray(TB), c=c)
    return Agreement(dB, A.error, float(np.abs(TA - TB).max()), eT, ca["class"], cb["class"], ca["trace"], cb["trace"])
