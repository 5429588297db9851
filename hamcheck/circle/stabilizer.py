"""One stabilizer routine: the numerical kernel of a linear map, with one documented threshold.

Both families compute a stabilizer two ways, and every one of the four
computations ends here:

* Virasoro, from solutions: ``Q -> M Q M^T - Q`` on symmetric 2x2 matrices
  (``M`` the monodromy); from Fourier modes: ``X -> delta_X T``.
* Loop groups, from transport: ``xi_0 -> Ad_Hol xi_0 - xi_0``; from Fourier
  modes: ``xi -> [xi, A] + c xi'``.

A direction is in the kernel when its singular value, divided by ``scale``
(a bound on the map's size), is at most ``circle.TOLERANCES.stabilizer`` plus
``circle.TOLERANCES.error_margin`` times the error of the matrix it was built
from (so a kernel is never decided finer than the map is known).

>>> import numpy as np
>>> k = kernel(np.diag([1.0, 0.5, 1e-15]))
>>> k.dim, k.basis.shape
(1, (1, 3))
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .tolerances import TOLERANCES

__all__ = ["Kernel", "kernel", "subspace_distance"]


@dataclass(frozen=True)
class Kernel:
    """``dim``; ``basis`` (dim, n) orthonormal rows; ``relative`` the singular values over the scale (descending)."""

    dim: int
    basis: np.ndarray
    relative: np.ndarray
    threshold: float

    def smallest(self, extra: int = 2) -> list:
        """The ``dim + extra`` smallest relative singular values, ascending (for reports)."""
        return np.sort(self.relative)[: self.dim + extra].tolist()


def kernel(L, *, scale: float | None = None, error: float = 0.0) -> Kernel:
    """Kernel of the matrix ``L`` (columns = the map's inputs).

    ``scale`` defaults to the largest singular value; ``error`` is the relative
    error of the data ``L`` was built from (a propagated matrix).
    """
    L = np.asarray(L)
    _u, s, vt = np.linalg.svd(L, full_matrices=L.shape[0] < L.shape[1])  # all of R^n only for a wide L
    n = vt.shape[0]
    s_full = np.r_[s, np.zeros(n - s.size)]  # a wide matrix has a kernel of at least n - rows
    scale = float(s.max()) if scale is None and s.size and s.max() > 0 else (1.0 if scale is None else float(scale))
    rel = s_full / scale
    threshold = TOLERANCES.stabilizer + TOLERANCES.error_margin * float(error)
    null = vt[rel <= threshold]
    return Kernel(int(null.shape[0]), null, rel, threshold)


def subspace_distance(A, B) -> float:
    """Largest sine of the principal angles between the row spans of A and B (inf when dims differ)."""
    A, B = np.asarray(A), np.asarray(B)
    if A.shape[0] != B.shape[0]:
        return float("inf")
    if A.shape[0] == 0:
        return 0.0
    qa, _ = np.linalg.qr(A.T)
    qb, _ = np.linalg.qr(B.T)
    # sines of the principal angles directly (1 - cos^2 would lose half the digits)
    return float(np.linalg.svd(qb - qa @ (qa.T @ qb), compute_uv=False).max())
