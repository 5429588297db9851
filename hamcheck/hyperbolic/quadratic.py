"""The rational quadratic differential of a disk with cone points, up to its accessory parameters.

For a complete hyperbolic metric on the unit disk the developing map extends
across the circle by reflection, so ``q`` is rational, symmetric under
``z -> 1/conj(z)`` (``q(z) = conj(q(1/conj z)) / z^4``), with double poles
``a_j = (1 - beta_j^2)/4`` at the cone points ``p_j`` and at their reflections
``p_j* = 1/conj(p_j)``, and regular elsewhere (a cone at 0 reflects to infinity).
Writing the principal parts

    q(z) = sum_j  a_j/(z - p_j)^2 + b_j/(z - p_j) + a_j/(z - p_j*)^2 + b_j*/(z - p_j*)   [+ a_0/z^2 + b_0/z]

the reflection fixes ``b_j* = -conj(p_j)^2 conj(b_j) - 2 a_j conj(p_j)``; regularity at
infinity (``q = O(z^-4)``, or ``~ a_0 z^-2`` with a cone at 0) gives the real-linear
conditions ``sum Im(b_j p_j) = 0`` and, without a cone at 0, ``sum b_j + b_j* = 0``
(with one, ``b_0 = -sum (b_j + b_j*)``). What is left is ``2n - 3`` real accessory
parameters: :class:`AccessoryFamily` parametrises them as ``b = b_part + N x``.
The derivation is in DEVELOPERS.md; the tests check it against closed forms.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import UsageError
from ._common import Cone

#: |p| below this counts as a cone at the origin (reflected to infinity).
ORIGIN_TOL = 1e-12


def reflected_residue(p, a, b):
    """``b* = -conj(p)^2 conj(b) - 2 a conj(p)``: the simple-pole coefficient at ``1/conj(p)``."""
    pb = np.conj(p)
    return -pb**2 * np.conj(b) - 2 * a * pb


@dataclass(frozen=True)
class AccessoryFamily:
    """The affine family of admissible simple-pole coefficients for given cones.

    ``b(x) = b_part + N @ x`` (complex, one per cone off the origin) for real
    ``x`` of length ``dim`` (``2n - 3``, or 0 when the conditions leave none).

    >>> fam = AccessoryFamily.of([(0.4, 3.0), (-0.4, 3.0)])
    >>> fam.dim
    1
    """

    cones: tuple
    off: tuple  # indices of cones off the origin
    origin: int | None  # index of a cone at the origin, if any
    b_part: np.ndarray = field(repr=False)
    N: np.ndarray = field(repr=False)  # complex (m, dim)

    @classmethod
    def of(cls, cones) -> "AccessoryFamily":
        from ._common import as_cones

        cones = as_cones(cones)
        off = tuple(i for i, c in enumerate(cones) if abs(c.p) > ORIGIN_TOL)
        at0 = [i for i, c in enumerate(cones) if abs(c.p) <= ORIGIN_TOL]
        origin = at0[0] if at0 else None
        m = len(off)
        p = np.array([cones[i].p for i in off], dtype=complex)
        a = np.array([cones[i].double_pole for i in off])

        def conditions(bvec):
            rows = [np.sum(np.imag(bvec * p))]
            if origin is None:
                s = np.sum(bvec + reflected_residue(p, a, bvec))
                rows += [s.real, s.imag]
            return np.array(rows)

        # the conditions are real-affine in (Re b, Im b): build the matrix column by column
        c0 = conditions(np.zeros(m, complex)) if m else np.zeros(1 if origin is not None else 3)
        cols = []
        for k in range(2 * m):
            e = np.zeros(m, complex)
            e[k % m] = 1.0 if k < m else 1.0j
            cols.append(conditions(e) - c0)
        A = np.array(cols).T if cols else np.zeros((c0.size, 0))
        if m:
            xs, *_ = np.linalg.lstsq(A, -c0, rcond=None)
            _, s, vt = np.linalg.svd(A)
            rank = int(np.sum(s > 1e-12 * max(s.max(), 1.0)))
            null = vt[rank:].T
        else:
            xs, null = np.zeros(0), np.zeros((0, 0))
        if np.abs(A @ xs + c0).max(initial=0.0) > 1e-10 * max(1.0, np.abs(c0).max()):
            raise UsageError("no quadratic differential with these cone points is regular at infinity")  # pragma: no cover
        b_part = xs[:m] + 1j * xs[m:]
        N = null[:m] + 1j * null[m:] if m else np.zeros((0, 0), complex)
        return cls(cones, off, origin, b_part, N)

    @property
    def dim(self) -> int:
        return int(self.N.shape[1]) if self.N.size else 0

    def residues(self, x=None) -> np.ndarray:
        x = np.zeros(self.dim) if x is None else np.asarray(x, dtype=float)
        return self.b_part + (self.N @ x if self.dim else 0.0)

    def guess(self) -> np.ndarray:
        """Start for root finding: each cone's one-point residue ``-2a/(p - p*)``, projected on the family."""
        if not self.dim:
            return np.zeros(0)
        p = np.array([self.cones[i].p for i in self.off])
        a = np.array([self.cones[i].double_pole for i in self.off])
        b1 = -2 * a / (p - 1 / np.conj(p))
        A = np.vstack([self.N.real, self.N.imag])
        r = np.concatenate([(b1 - self.b_part).real, (b1 - self.b_part).imag])
        return np.linalg.lstsq(A, r, rcond=None)[0]

    def q(self, x=None) -> "RationalQ":
        return RationalQ.build(self, self.residues(x))

    def basis_values(self, z):
        """``(q_fixed(z), [dq/dx_k (z)])``: q is real-affine in x, so this is exact."""
        z = np.asarray(z, dtype=complex)
        q0 = self.q()(z)
        return q0, np.array([RationalQ.build(self, self.residues(np.eye(self.dim)[k]))(z) - q0 for k in range(self.dim)])

    def fit(self, z, qvals):
        """Least-squares accessory parameters from samples of q; returns ``(x, relative residual)``."""
        q0, B = self.basis_values(z)
        rhs = np.asarray(qvals, complex) - q0
        scale = max(np.abs(qvals).max(), np.abs(q0).max(), 1e-300)
        if not self.dim:
            return np.zeros(0), float(np.abs(rhs).max() / scale)
        A = np.vstack([B.real.T, B.imag.T])
        x = np.linalg.lstsq(A, np.concatenate([rhs.real, rhs.imag]), rcond=None)[0]
        res = rhs - x @ B
        return x, float(np.abs(res).max() / scale)


@dataclass(frozen=True)
class RationalQ:
    """``q(z)`` as a sum of principal parts (numpy, complex, vectorised); exact once ``b`` is known.

    >>> fam = AccessoryFamily.of([(0.0, 2.0)])
    >>> q = fam.q(); complex(q(0.5)) == (1 - (2.0 / (2 * np.pi))**2) / 4 / 0.25
    True
    """

    poles: np.ndarray  # (k,) complex
    double: np.ndarray  # (k,) real
    simple: np.ndarray  # (k,) complex

    @classmethod
    def build(cls, family: AccessoryFamily, b) -> "RationalQ":
        poles, dbl, smp = [], [], []
        b = np.asarray(b, complex)
        for k, i in enumerate(family.off):
            c: Cone = family.cones[i]
            a = c.double_pole
            poles += [c.p, 1 / np.conj(c.p)]
            dbl += [a, a]
            smp += [b[k], reflected_residue(c.p, a, b[k])]
        if family.origin is not None:
            poles.append(0j)
            dbl.append(family.cones[family.origin].double_pole)
            smp.append(-np.sum(smp) if smp else 0j)
        return cls(np.array(poles, complex), np.array(dbl, float), np.array(smp, complex))

    def __call__(self, z):
        z = np.asarray(z, dtype=complex)
        w = z[..., None] - self.poles
        return np.sum(self.double / w**2 + self.simple / w, axis=-1)

    def derivative(self, z):
        z = np.asarray(z, dtype=complex)
        w = z[..., None] - self.poles
        return np.sum(-2 * self.double / w**3 - self.simple / w**2, axis=-1)

    @property
    def singular_points(self) -> np.ndarray:
        return self.poles
