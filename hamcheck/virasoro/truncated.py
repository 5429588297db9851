"""The Virasoro algebra truncated to real Fourier modes, and checks of a user's truncated action.

Vectors are real mode vectors ``[a0, a1, b1, ..., aK, bK]``
(:func:`hamcheck.circle.vector_modes`). :func:`check_user_action` compares a
user's bracket, pairing and infinitesimal coadjoint action with the
Gelfand–Fuchs cocycle ``c GF`` through :func:`hamcheck.circle.check_coadjoint_action`
and returns a :class:`hamcheck.Report`.

>>> alg = truncated_algebra(6, c=1.0)
>>> rep = check_user_action(alg.bracket, alg.pairing, alg.action, 6, 1.0)
>>> rep.passed, [f.kind for f in rep.findings]
(True, ['central-cocycle'])
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import circle
from ..errors import UsageError
from .diffeomorphisms import _check_c, bracket, gelfand_fuchs

__all__ = ["TruncatedVirasoro", "truncated_algebra", "check_user_action"]


@dataclass(frozen=True)
class TruncatedVirasoro:
    """The standard truncated bracket, pairing, action and ``c GF`` on real mode vectors.

    Vectors are ``[a0, a1, b1, ..., aK, bK]`` (see :func:`hamcheck.circle.vector_modes`);
    products are formed on a grid of ``4K + 4`` points (no aliasing below mode K).
    """

    K: int
    c: float
    central: float = 0.5  # the coefficient of c X''' in delta

    @property
    def modes(self):
        return circle.vector_modes(self.K)

    @property
    def M(self):
        return 4 * self.K + 4

    def _g(self, v):
        return np.asarray(circle.mode_vector_to_samples(np.asarray(v, float), self.M))

    def _v(self, f):
        return circle.samples_to_mode_vector(np.asarray(f), self.K)

    def bracket(self, X, Y):
        return self._v(bracket(self._g(X), self._g(Y)))

    def pairing(self, T, X):
        return float(circle.integrate(self._g(T) * self._g(X)))

    def action(self, X, T):
        Xg, Tg = self._g(X), self._g(T)
        lin = Xg * circle.derivative(Tg) + 2 * circle.derivative(Xg) * Tg
        return self._v(lin + self.central * self.c * circle.derivative(Xg, 3))

    def reference(self, X, Y):
        return self.c * float(gelfand_fuchs(self._g(X), self._g(Y)))


def truncated_algebra(K: int, c: float) -> TruncatedVirasoro:
    """The Virasoro algebra truncated to modes ``<= K`` in this module's conventions.

    >>> alg = truncated_algebra(4, c=1.0)
    >>> alg.modes.tolist()
    [0, 1, 1, 2, 2, 3, 3, 4, 4]
    """
    if isinstance(K, bool) or not isinstance(K, (int, np.integer)) or K < 3:
        raise UsageError(f"K must be an integer >= 3; got {K!r}")
    return TruncatedVirasoro(int(K), _check_c(c))


def check_user_action(bracket, pairing, action, K: int, c: float, *, sign: int = +1, samples: int = 4, seed: int = 0):
    """Check a user's truncated Virasoro action against the Gelfand–Fuchs cocycle ``c GF``.

    The user's functions act on real mode vectors ``[a0, a1, b1, ..., aK, bK]``.
    Returns a :class:`hamcheck.Report`; a ``central-cocycle`` finding gives the
    ratio of the user's central term to ``c GF`` (1/6 for a ``c/12``
    normalisation where ``c/2`` is meant); :func:`hamcheck.circle.central_ratio`
    reads it back.
    """
    ref = truncated_algebra(K, c)
    return circle.check_coadjoint_action(
        bracket, pairing, action, ref.modes, reference=ref.reference,
        reference_name="c x Gelfand-Fuchs", sign=sign, samples=samples, seed=seed,
        name=f"Virasoro action truncated to K = {ref.K}, c = {ref.c:g}",
        replay=f"virasoro.check_user_action(bracket, pairing, action, {ref.K}, {ref.c:g}, sign={sign:+d}, samples={samples}, seed={seed})",
    )
