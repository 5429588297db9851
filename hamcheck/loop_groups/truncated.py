"""The loop algebra truncated to real Fourier modes, and checks of a user's infinitesimal action.

>>> alg = truncated_algebra(4, c=1.0)
>>> alg.modes.size
27
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import circle
from ..errors import UsageError
from .connections import pairing
from .groups import SU2, MatrixGroup, _check_group, _check_level, grid

__all__ = ["TruncatedLoopAlgebra", "truncated_algebra", "check_user_action"]


def _loop_basis(K: int, M: int):
    th = grid(M)
    funcs = [np.ones(M)]
    derivs = [np.zeros(M)]
    modes = [0]
    for n in range(1, K + 1):
        funcs += [np.cos(n * th), np.sin(n * th)]
        derivs += [-n * np.sin(n * th), n * np.cos(n * th)]
        modes += [n, n]
    return np.stack(funcs, 1), np.stack(derivs, 1), np.array(modes)


@dataclass(frozen=True, eq=False)
class TruncatedLoopAlgebra:
    """The loop algebra on real modes ``|n| <= K`` with the standard level-c action.

    Coefficient vectors have length ``d * (2K + 1)``: for each basis element
    ``e_a`` of the group, the constant, then ``cos n theta, sin n theta`` for
    n = 1..K. Products are computed on ``4K + 2`` points and projected back to
    modes ``<= K``. ``reference`` is the standard cocycle ``c int <xi, eta'>``:
    by the pairing identity (docs/references.md, Loop groups)
    ``-<delta_xi A, eta> - <A, [xi, eta]>`` equals it, so the standard action has ratio 1.
    """

    K: int
    c: float
    group: MatrixGroup = SU2

    @property
    def _grid(self):
        F, dF, modes = _loop_basis(self.K, 4 * self.K + 2)
        return F, dF, modes

    @property
    def modes(self) -> np.ndarray:
        return np.tile(self._grid[2], self.group.dim)

    def values(self, v):
        F = self._grid[0]
        return F @ np.asarray(v, dtype=float).reshape(self.group.dim, -1).T

    def derivative_values(self, v):
        dF = self._grid[1]
        return dF @ np.asarray(v, dtype=float).reshape(self.group.dim, -1).T

    def coefficients(self, f):
        F = self._grid[0]
        M = F.shape[0]
        norms = np.full(F.shape[1], M / 2.0)
        norms[0] = M
        return ((F.T @ np.asarray(f)) / norms[:, None]).T.ravel()

    def bracket(self, X, Y):
        return self.coefficients(self.group.bracket(self.values(X), self.values(Y)))

    def pairing(self, T, X):
        return pairing(self.values(T), self.values(X), self.group)

    def action(self, X, T):
        """``delta_X T = [X, T] + c X'`` projected to modes <= K."""
        return self.coefficients(self.group.bracket(self.values(X), self.values(T)) + self.c * self.derivative_values(X))

    def reference(self, X, Y):
        return self.c * pairing(self.values(X), self.derivative_values(Y), self.group)


def truncated_algebra(K: int, c: float, group: MatrixGroup = SU2) -> TruncatedLoopAlgebra:
    """The standard truncated loop algebra (a template and the reference for user actions)."""
    if isinstance(K, bool) or not isinstance(K, (int, np.integer)) or K < 3:
        raise UsageError(f"K must be an integer >= 3 (the de-aliased bands need it); got {K!r}")
    return TruncatedLoopAlgebra(int(K), _check_level(c), _check_group(group))


def check_user_action(bracket, pairing_fn, action, K: int, c: float, *, group: MatrixGroup = SU2, samples: int = 4, seed: int = 0):
    """Check a user's infinitesimal action on connections, on the modes of :func:`truncated_algebra`.

    Uses the shared :func:`hamcheck.cocycles.check_coadjoint_action` with the
    left-action sign (``[V_xi, V_eta] = -V_[xi, eta]``, central term
    ``-<delta_xi A, eta> - <A, [xi, eta]>``) and the reference ``c int <xi, eta'>``
    (the level-c cocycle), so a level off by ``2 pi`` or ``1/2`` is reported as
    a ``central-cocycle`` finding with that ratio. Returns a :class:`hamcheck.Report`.

    >>> alg = truncated_algebra(4, c=1.5)
    >>> rep = check_user_action(alg.bracket, alg.pairing, alg.action, 4, 1.5)
    >>> rep.passed, round(circle.central_ratio(rep), 8)
    (True, 1.0)
    """
    alg = truncated_algebra(K, c, group)
    return circle.check_coadjoint_action(
        bracket,
        pairing_fn,
        action,
        alg.modes,
        reference=alg.reference,
        reference_name=f"the level-{alg.c:g} loop cocycle c int <xi, eta'>",
        sign=-1,
        samples=samples,
        seed=seed,
        name=f"{alg.group.name} loop algebra action truncated to K = {alg.K}, level {alg.c:g}",
        replay=f"loop_groups.check_user_action(bracket, pairing, action, {alg.K}, {alg.c:g}, group={alg.group.name}, "
        f"samples={samples}, seed={seed})",
    )
