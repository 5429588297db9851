"""Lie algebras in a basis: structure constants, exponential, Ad and Ad*.

A :class:`LieAlgebra` is the algebra ``g`` acting on a model. Moment maps are
recorded by their components ``<mu, e_a>`` in the chosen basis ``e_a``, so
everything here works in that basis:

* structure constants ``C[a, b, c]`` with ``[e_a, e_b] = sum_c C[a, b, c] e_c``;
* ``Ad_g`` as the matrix whose column ``b`` holds the coordinates of ``g e_b g^-1``;
* the coadjoint action on components: ``<Ad*_g mu, e_b> = <mu, Ad_{g^-1} e_b>``.

Example
-------
>>> import numpy as np
>>> from hamcheck import LieAlgebra
>>> so3 = LieAlgebra.from_matrices([
...     np.array([[0, 0, 0], [0, 0, -1], [0, 1, 0]]),
...     np.array([[0, 0, 1], [0, 0, 0], [-1, 0, 0]]),
...     np.array([[0, -1, 0], [1, 0, 0], [0, 0, 0]])], names=["L1", "L2", "L3"])
>>> so3.structure_constants[0, 1]          # [L1, L2] = L3
array([0., 0., 1.])
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ._jax import jax, jnp
from .errors import ModelError
from .numerics import TOLERANCES

__all__ = ["LieAlgebra"]


def _as_real_vectors(mats: np.ndarray) -> np.ndarray:
    """Stack real and imaginary parts of flattened matrices as columns."""
    flat = mats.reshape(mats.shape[0], -1)
    return np.concatenate([flat.real, flat.imag], axis=1).T


#: A basis with at most this fraction of nonzero entries is treated as sparse:
#: its commutators are formed with ``scipy.sparse`` and pairs that commute are
#: skipped (a torus of 256 rotation blocks in 512 x 512 matrices: seconds, where
#: dense products take hours).
SPARSE_DENSITY = 0.05


def _dense_commutators(mats):
    """``(a, b, [e_a, e_b] as a real vector)`` for ``a < b``, one batched product per ``a``."""
    k = mats.shape[0]
    for a in range(k - 1):
        comm = mats[a] @ mats[a + 1:] - mats[a + 1:] @ mats[a]
        V = _as_real_vectors(comm)
        for j, b in enumerate(range(a + 1, k)):
            yield a, b, V[:, j]


def _sparse_commutators(mats):
    """As :func:`_dense_commutators`, for sparse matrices, skipping the pairs that commute exactly."""
    from scipy import sparse

    k, d = mats.shape[0], mats.shape[1]
    S = [sparse.csr_matrix(m) for m in mats]
    used_rows = (np.abs(mats).sum(axis=2) > 0).astype(float)  # (k, d): rows each matrix uses
    used_cols = (np.abs(mats).sum(axis=1) > 0).astype(float)
    meet = used_cols @ used_rows.T > 0  # e_a e_b can be nonzero only where a's columns meet b's rows
    meet = meet | meet.T
    for a, b in zip(*np.nonzero(np.triu(meet, 1))):
        comm = (S[a] @ S[b] - S[b] @ S[a]).tocoo()
        comm.eliminate_zeros()
        if comm.nnz == 0:
            continue
        flat = np.zeros(d * d, dtype=mats.dtype)
        flat[comm.row * d + comm.col] = comm.data
        yield int(a), int(b), np.concatenate([flat.real, flat.imag])


@dataclass(frozen=True, eq=False)
class LieAlgebra:
    """A finite-dimensional real Lie algebra with a chosen basis.

    Build it with :meth:`from_matrices` (a matrix algebra: the group acts
    through matrices, so finite actions and ``Ad`` are available) or with
    :meth:`from_structure_constants` (abstract: infinitesimal checks only).
    """

    structure_constants: np.ndarray
    names: tuple[str, ...]
    basis: np.ndarray | None = field(default=None, repr=False)
    _pinv: np.ndarray | None = field(default=None, repr=False)
    #: Entries (of the real vector of a matrix) that ``_pinv`` acts on; None: all of them.
    _rows: np.ndarray | None = field(default=None, repr=False)

    # ----------------------------------------------------------------- builders
    @classmethod
    def from_matrices(cls, basis, names=None) -> "LieAlgebra":
        """Matrix Lie algebra spanned by ``basis`` (real or complex square matrices).

        Raises :class:`ModelError` when the matrices are not square, not
        linearly independent over the reals, or not closed under the commutator
        (naming the bracket that leaves the span).
        """
        try:
            mats = np.stack([np.asarray(m) for m in basis])
        except ValueError as exc:
            raise ModelError(f"basis matrices must all have the same shape: {exc}") from None
        if mats.ndim != 3 or mats.shape[1] != mats.shape[2] or mats.shape[0] == 0:
            raise ModelError(
                f"basis must be a non-empty list of square matrices; got an array of shape {mats.shape}"
            )
        if not np.issubdtype(mats.dtype, np.number):
            raise ModelError(f"basis matrices must be numeric; got dtype {mats.dtype}")
        mats = mats.astype(np.complex128 if np.iscomplexobj(mats) else np.float64)
        k = mats.shape[0]
        names = cls._names(names, k)
        # only the entries some basis matrix uses: the rows of B that are not zero (a torus of 256
        # rotation blocks uses 512 of 2 x 512^2), so the SVD and the pseudo-inverse stay small
        flat = mats.reshape(k, -1)
        rows = np.flatnonzero(np.concatenate([np.any(flat.real != 0, axis=0), np.any(flat.imag != 0, axis=0)]))
        B = np.concatenate([flat.real, flat.imag], axis=1)[:, rows].T
        u, s, vt = np.linalg.svd(B, full_matrices=False)
        if s[-1] <= TOLERANCES.basis_rtol * s[0]:
            j = int(np.argmax(np.abs(vt[-1])))
            raise ModelError(
                f"basis is not linearly independent: {names[j]} is (nearly) a combination of the "
                f"others (relative singular value {s[-1] / s[0]:.1e}); expected {k} independent matrices"
            )
        pinv = (vt.T / s) @ u.T  # full column rank (just checked): the pseudo-inverse from the same SVD
        outside = np.ones(2 * flat.shape[1], dtype=bool)
        outside[rows] = False
        C = np.zeros((k, k, k))
        norms = np.linalg.norm(mats.reshape(k, -1), axis=1)
        sparse_basis = np.count_nonzero(mats) <= SPARSE_DENSITY * mats.size
        commutators = _sparse_commutators(mats) if sparse_basis else _dense_commutators(mats)
        for a, b, v in commutators:
            coords = pinv @ v[rows]
            miss = math.hypot(np.linalg.norm(B @ coords - v[rows]), np.linalg.norm(v[outside]))
            scale = norms[a] * norms[b]
            if miss > TOLERANCES.basis_rtol * max(scale, np.finfo(float).tiny):
                raise ModelError(
                    f"basis is not closed under the commutator: [{names[a]}, {names[b]}] leaves the "
                    f"span of the basis (relative distance {miss / scale:.2e}); add the missing "
                    "element to the basis or fix the matrices"
                )
            C[a, b], C[b, a] = coords, -coords
        C[np.abs(C) < 1e-14 * max(1.0, np.abs(C).max())] = 0.0
        return cls(C, names, mats, pinv, rows)

    @classmethod
    def from_structure_constants(cls, C, names=None) -> "LieAlgebra":
        """Abstract Lie algebra from ``C[a, b, c]``; checks antisymmetry and Jacobi.

        It has no group elements, so models over it get infinitesimal checks
        only (``group_equivariance`` is skipped with a reason).
        """
        C = np.asarray(C, dtype=float)
        if C.ndim != 3 or not (C.shape[0] == C.shape[1] == C.shape[2]):
            raise ModelError(f"structure constants must have shape (k, k, k); got {C.shape}")
        k = C.shape[0]
        names = cls._names(names, k)
        scale = max(np.abs(C).max(), 1.0)
        tol = TOLERANCES.basis_rtol * scale
        asym = C + C.transpose(1, 0, 2)
        if np.abs(asym).max() > tol:
            a, b, c = np.unravel_index(np.argmax(np.abs(asym)), asym.shape)
            raise ModelError(
                f"structure constants are not antisymmetric: C[{a},{b},{c}] + C[{b},{a},{c}] = "
                f"{asym[a, b, c]:.3g} for ({names[a]}, {names[b]}); expected [x, y] = -[y, x]"
            )
        # Jacobi: [[a,b],c] + [[b,c],a] + [[c,a],b] = 0
        ab_c = np.einsum("abd,dce->abce", C, C)
        jac = ab_c + ab_c.transpose(1, 2, 0, 3) + ab_c.transpose(2, 0, 1, 3)
        if np.abs(jac).max() > tol * scale:
            a, b, c, _ = np.unravel_index(np.argmax(np.abs(jac)), jac.shape)
            raise ModelError(
                f"structure constants violate the Jacobi identity for the triple "
                f"({names[a]}, {names[b]}, {names[c]}) (defect {np.abs(jac[a, b, c]).max():.3g})"
            )
        return cls(C, names)

    @staticmethod
    def _names(names, k) -> tuple[str, ...]:
        if names is None:
            return tuple(f"e{a + 1}" for a in range(k))
        names = tuple(str(n) for n in names)
        if len(names) != k:
            raise ModelError(f"got {len(names)} names for a basis of {k} elements")
        if len(set(names)) != k:
            raise ModelError(f"basis names must be distinct; got {names}")
        return names

    # ------------------------------------------------------------------ algebra
    @property
    def dim(self) -> int:
        return self.structure_constants.shape[0]

    @property
    def is_matrix(self) -> bool:
        """True when group elements (matrices) and finite actions are available."""
        return self.basis is not None

    @property
    def is_abelian(self) -> bool:
        return not np.any(self.structure_constants)

    def __repr__(self) -> str:
        kind = f"matrices {self.basis.shape[1]}x{self.basis.shape[1]}" if self.is_matrix else "abstract"
        return f"LieAlgebra(dim={self.dim}, names={list(self.names)}, {kind})"

    def bracket(self, xi, eta):
        """Coordinates of ``[xi, eta]`` for coordinate vectors ``xi``, ``eta``."""
        return jnp.einsum("a,b,abc->c", xi, eta, jnp.asarray(self.structure_constants))

    def _require_matrices(self, what: str) -> None:
        if not self.is_matrix:
            raise ModelError(
                f"{what} needs group elements, but this algebra was declared by structure constants; "
                "declare it with LieAlgebra.from_matrices to use finite actions"
            )

    def element(self, xi):
        """The matrix ``sum_a xi_a e_a``."""
        self._require_matrices("element")
        return jnp.einsum("a,aij->ij", xi, jnp.asarray(self.basis))

    def coordinates(self, M):
        """Coordinates of a matrix of the algebra in the basis (least squares)."""
        self._require_matrices("coordinates")
        flat = jnp.ravel(M)
        v = jnp.concatenate([jnp.real(flat), jnp.imag(flat)])
        return jnp.asarray(self._pinv) @ (v if self._rows is None else v[jnp.asarray(self._rows)])

    def exp(self, xi):
        """The group element ``exp(sum_a xi_a e_a)`` as a matrix."""
        return jax.scipy.linalg.expm(self.element(xi))

    def Ad(self, g):
        """Matrix of ``Ad_g`` in the basis: column ``b`` = coordinates of ``g e_b g^-1``."""
        self._require_matrices("Ad")
        ginv = jnp.linalg.inv(g)
        conj = jnp.einsum("ij,bjk,kl->bil", g, jnp.asarray(self.basis), ginv)
        return jax.vmap(self.coordinates)(conj).T

    def coadjoint(self, g, mu):
        """Components of ``Ad*_g mu``: ``<Ad*_g mu, e_b> = <mu, Ad_{g^-1} e_b>``."""
        return self.Ad(jnp.linalg.inv(g)).T @ mu

    def random_elements(self, rng: np.random.Generator, n: int, scale: float = 1.0) -> np.ndarray:
        """``n`` random algebra coordinate vectors, standard normal times ``scale``."""
        return scale * rng.standard_normal((n, self.dim))

    def random_group_elements(self, rng: np.random.Generator, n: int, scale: float = 1.0) -> np.ndarray:
        """``n`` group elements ``exp(xi)`` with normal random ``xi`` (as a numpy array)."""
        self._require_matrices("random_group_elements")
        import scipy.linalg

        xs = self.random_elements(rng, n, scale)
        return scipy.linalg.expm(np.einsum("na,aij->nij", xs, self.basis))  # expm maps over the stack
