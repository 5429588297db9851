"""Quantization commutes with reduction, toric case: lattice points vs holomorphic Lefschetz.

For a torus with integral weights and an integral moment map at the fixed
points (a prequantizable space, e.g. CP^n with ``omega`` scaled by ``2k``:
the k-th power of the hyperplane bundle), the equivariant index is given by
the holomorphic Lefschetz fixed-point formula

    ``chi(t) = sum_p t^{mu(p)} / prod_k (1 - t^{-w_k(p)})``

(``w_k = sign * flow * alpha_k``, integer vectors), expanded exactly as a
Laurent polynomial (each factor as a series in one generic direction; the
infinite tails cancel), and compared with the lattice points of the moment
polytope (the convex hull of the fixed-point images). Both are exact integers.
The fixed points come from every chart of the atlas and must pass the
identities of a compact space; a chart missing some is refused in one line.

Example
-------
>>> lc = hamcheck.lattice_count(cp2_level_3, ["t1", "t2"])     # doctest: +SKIP
>>> lc.lattice_points, lc.index                                # doctest: +SKIP
(10, 10)
"""

from __future__ import annotations

import itertools
from collections import Counter
from dataclasses import dataclass

import numpy as np

from ..diagnose import vec
from ..errors import UsageError
from ._common import require_model
from ._torus import torus_basis, weight_vectors
from .moment_image import hull_of_fixed_images, torus_fixed_points

__all__ = ["LatticeCount", "lattice_count", "lefschetz_character"]

#: Distance to the nearest integer tolerated for weights and fixed-point values
#: (they come from eigenvalues and moment values good to ~1e-12).
INTEGRAL_ATOL = 1e-6


@dataclass(frozen=True, eq=False)
class LatticeCount:
    """Lattice points of the moment polytope beside the Lefschetz index."""

    model: str
    torus: tuple
    lattice_points: int
    index: int
    character: dict
    points: tuple
    vertices: tuple

    @property
    def agree(self) -> bool:
        """The character has multiplicity exactly 1 at every lattice point and nothing else."""
        return self.character == {p: 1 for p in self.points}

    def __repr__(self) -> str:
        return (
            f"LatticeCount({self.model!r}: lattice points={self.lattice_points}, Lefschetz index={self.index}, "
            f"character agrees={self.agree})"
        )


def _integral(values, what):
    r = np.round(values)
    if np.max(np.abs(values - r), initial=0) > INTEGRAL_ATOL:
        raise UsageError(
            f"{what} are not integers ({vec(np.ravel(values), 6)}): the count needs a torus "
            "with integral weights and a moment map with integral values at the fixed points (scale omega, or shift "
            "mu by a constant)"
        )
    return r.astype(int)


def lefschetz_character(data) -> Counter:
    """Exact Laurent expansion of ``sum_p t^lam_p / prod_k (1 - t^-w_k)`` for ``data = [(lam_p, [w_k])]``."""
    m = len(data[0][0])
    rng = np.random.default_rng(7)
    ws = [np.asarray(w) for _, ws_ in data for w in ws_]
    for _ in range(1000):
        c = rng.integers(-1000, 1000, size=m)
        if all(int(c @ w) != 0 for w in ws):
            break
    else:
        raise UsageError("a weight vanishes: the fixed points are not isolated")
    floor = min(int(c @ np.asarray(lam)) for lam, _ in data)
    total = Counter()
    for lam, weights in data:
        # each factor as a series decreasing along c: 1/(1-t^-w) = sum_{j>=0} t^{-jw} (c.w > 0)
        # or -sum_{j>=1} t^{jw} (c.w < 0); terms below the polytope's floor cancel in the sum
        steps, signs, starts = [], [], []
        for w in weights:
            w = np.asarray(w)
            if c @ w > 0:
                steps.append(-w), signs.append(1), starts.append(0)
            else:
                steps.append(w), signs.append(-1), starts.append(1)
        top = int(c @ np.asarray(lam))
        ranges = []
        for st, j0 in zip(steps, starts):
            jmax = (top - floor) // int(-(c @ st)) + 1
            ranges.append(range(j0, jmax + 1))
        sign = int(np.prod(signs))
        for js in itertools.product(*ranges):
            e = np.asarray(lam) + sum(j * st for j, st in zip(js, steps)) if steps else np.asarray(lam)
            if int(c @ e) >= floor:
                total[tuple(int(v) for v in e)] += sign
    return Counter({k: v for k, v in total.items() if v != 0})


def _polytope_points(vertices, model_name="model"):
    V = np.asarray(vertices, dtype=float)
    m = V.shape[1]
    lo, hi = np.floor(V.min(axis=0)).astype(int), np.ceil(V.max(axis=0)).astype(int)
    grid = np.stack(np.meshgrid(*[np.arange(a, b + 1) for a, b in zip(lo, hi)], indexing="ij"), -1).reshape(-1, m)
    if m == 1:
        keep = (grid[:, 0] >= V.min() - 1e-9) & (grid[:, 0] <= V.max() + 1e-9)
    else:
        eq = hull_of_fixed_images(V, "lattice_count", model_name).equations
        keep = np.max(grid @ eq[:, :-1].T + eq[:, -1], axis=1) <= 1e-9
    return tuple(sorted(tuple(int(v) for v in p) for p in grid[keep]))


def lattice_count(model, torus, *, starts: int = 64, seed: int = 0) -> LatticeCount:
    """Count lattice points of the moment polytope and the Lefschetz index; both exact integers.

    The fixed points come from every chart of the atlas and must be complete
    (one line otherwise: fixed points missing from the chart).
    """
    require_model(model, "lattice_count")
    B = torus_basis(model, torus, "torus")
    xi, fps = torus_fixed_points(model, B, "lattice_count", starts, seed)
    eps = model.convention.effective_sign
    data = []
    for p in fps:
        lam = _integral(np.asarray(p.moment) @ B.T, "the moment values at the fixed points")
        W, _ = weight_vectors(model.atlas[p.chart], p.point, B, xi)
        data.append((lam, [_integral(eps * w, "the weights at the fixed points") for w in W]))
    char = lefschetz_character(data)
    pts = _polytope_points([lam for lam, _ in data], model.name)
    names = tuple(str(i) for i in range(B.shape[0]))
    return LatticeCount(
        model.name, names, len(pts), int(sum(char.values())), dict(char), pts, tuple(tuple(int(v) for v in l) for l, _ in data)
    )
