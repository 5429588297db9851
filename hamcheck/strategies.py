"""Hypothesis strategies for property tests of Hamiltonian constructions.

* :func:`symplectic_matrices` — random constant symplectic forms ``S^T J S``;
* :func:`linear_systems` — a constant symplectic form, a Lie algebra of
  matrices preserving it (a torus of commuting generators or all of
  ``sp``), acting linearly, with the quadratic moment map
  ``mu_A(x) = -1/2 x^T Omega A x`` (``iota_{Ax} omega = d mu_A``);
  ``.model()`` turns one into a :class:`hamcheck.Model`;
* :func:`points` — points of a model's chart from its ``sample``;
* :func:`group_elements` — elements ``exp(xi)`` of a matrix Lie algebra.

Example
-------
>>> from hypothesis import given, settings
>>> import hamcheck
>>> from hamcheck.strategies import linear_systems
>>> @settings(max_examples=2, deadline=None)
... @given(linear_systems(max_pairs=1))
... def test_linear_models_pass(system):
...     assert hamcheck.check(system.model(), points=4).passed
>>> test_linear_models_pass()
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from hypothesis import strategies as st

from ._jax import jnp
from .algebra import LieAlgebra
from .model import Model

__all__ = ["symplectic_matrices", "linear_systems", "LinearSystem", "points", "group_elements"]


def _standard_J(n: int) -> np.ndarray:
    return np.kron(np.eye(n), np.array([[0.0, 1.0], [-1.0, 0.0]]))


def _well_conditioned(rng: np.random.Generator, m: int) -> np.ndarray:
    """A random matrix with singular values in [0.5, 2] (keeps residual scales honest)."""
    q1, _ = np.linalg.qr(rng.standard_normal((m, m)))
    q2, _ = np.linalg.qr(rng.standard_normal((m, m)))
    return q1 @ np.diag(rng.uniform(0.5, 2.0, m)) @ q2


@st.composite
def symplectic_matrices(draw, min_pairs: int = 1, max_pairs: int = 3):
    """Constant symplectic matrices ``S^T J S`` of size ``2n``, ``n`` in the given range."""
    n = draw(st.integers(min_pairs, max_pairs))
    seed = draw(st.integers(0, 2**32 - 1))
    S = _well_conditioned(np.random.default_rng(seed), 2 * n)
    return S.T @ _standard_J(n) @ S


@dataclass(frozen=True)
class LinearSystem:
    """A linear Hamiltonian system: ``Omega``, generators ``A_a`` with ``A^T Omega + Omega A = 0``."""

    Omega: np.ndarray = field(repr=False)
    generators: np.ndarray = field(repr=False)
    kind: str = "torus"

    @property
    def dim(self) -> int:
        return self.Omega.shape[0]

    def __repr__(self) -> str:
        return f"LinearSystem(dim={self.dim}, algebra={self.kind} of dim {len(self.generators)})"

    def algebra(self) -> LieAlgebra:
        return LieAlgebra.from_matrices(list(self.generators))

    def moment(self, x):
        """``mu_a(x) = -1/2 x^T Omega A_a x``."""
        return -0.5 * jnp.einsum("i,ij,ajk,k->a", x, jnp.asarray(self.Omega), jnp.asarray(self.generators), x)

    def model(self, name: str = "linear", **overrides) -> Model:
        """The :class:`hamcheck.Model`; keyword overrides replace any of its functions."""
        Omega = jnp.asarray(self.Omega)
        kwargs = dict(
            form=lambda x: Omega,
            algebra=self.algebra(),
            moment=self.moment,
            action=lambda g, x: g @ x,
        )
        kwargs.update(overrides)
        return Model(name, self.dim, **kwargs)


@st.composite
def linear_systems(draw, min_pairs: int = 1, max_pairs: int = 2, kinds=("torus", "symplectic")):
    """Random :class:`LinearSystem`: a torus of commuting generators, or the whole ``sp(Omega)``.

    The torus is spanned by odd powers of one random ``A = Omega^-1 Q`` (odd
    powers of an element of ``sp`` stay in ``sp`` and commute); ``sp(Omega)``
    is spanned by ``Omega^-1 Q`` for a basis ``Q`` of symmetric matrices.
    """
    n = draw(st.integers(min_pairs, max_pairs))
    kind = draw(st.sampled_from(kinds))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    m = 2 * n
    S = _well_conditioned(rng, m)
    Omega = S.T @ _standard_J(n) @ S
    Oinv = np.linalg.inv(Omega)
    if kind == "torus":
        Q = rng.standard_normal((m, m))
        A = Oinv @ (Q + Q.T) / 2
        A /= np.linalg.norm(A, 2)
        k = draw(st.integers(1, n))
        gens = [np.linalg.matrix_power(A, 2 * j + 1) for j in range(k)]
    else:
        gens = []
        for i in range(m):
            for j in range(i, m):
                Q = np.zeros((m, m))
                Q[i, j] = Q[j, i] = 1.0
                gens.append(Oinv @ Q)
    return LinearSystem(Omega, np.stack(gens), kind)


def points(model: Model, count: int = 1):
    """Points of the model's chart drawn with its own ``sample`` from a hypothesis-chosen seed."""

    def draw_points(seed):
        rng = np.random.default_rng(seed)
        pts = np.stack([np.asarray(model.sample(rng), dtype=float) for _ in range(count)])
        return pts if count > 1 else pts[0]

    return st.integers(0, 2**32 - 1).map(draw_points)


def group_elements(algebra: LieAlgebra, scale: float = 1.0):
    """Group elements ``exp(scale * xi)``, ``xi`` standard normal in the basis."""
    return st.integers(0, 2**32 - 1).map(
        lambda seed: algebra.random_group_elements(np.random.default_rng(seed), 1, scale)[0]
    )
