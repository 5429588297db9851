"""Shared pieces: compiled per-model functions, algebra arguments, the Liouville density.

Every jitted function is built once per model and cached on a weak reference
to the model, with the algebra element ``xi`` and the parameter ``s`` as
traced arguments, so repeated calls never recompile.
"""

from __future__ import annotations

import numpy as np

from .._jax import jax, jnp
from .. import cache as _cache
from .._fields import hamiltonian_field  # noqa: F401  (one definition, shared with the flow check)
from ..errors import UsageError
from ..model import Model



def require_model(model, who: str) -> Model:
    if not isinstance(model, Model):
        raise UsageError(f"{who}() takes a hamcheck.Model; got {type(model).__name__}")
    if not model.traced:
        raise UsageError(
            f"{who}() needs a model differentiated by jax (autodiff); {model.name!r} was declared with "
            "derivatives='finite-differences'"
        )
    return model


def compiled(model: Model, key: str, build):
    """``build(model)`` once per (model, key), in :mod:`hamcheck.cache`."""
    return _cache.compiled(model, ("consequences", key), build)


def algebra_vector(model: Model, xi, what: str = "xi") -> np.ndarray:
    """An element of the model's algebra: a coordinate vector, a basis name, or ``{name: coefficient}``."""
    names = model.algebra.names
    k = model.algebra.dim
    if isinstance(xi, str):
        if xi not in names:
            raise UsageError(f"{what}={xi!r} is not a basis element; expected one of {list(names)}")
        v = np.zeros(k)
        v[names.index(xi)] = 1.0
        return v
    if isinstance(xi, dict):
        v = np.zeros(k)
        for name, c in xi.items():
            if name not in names:
                raise UsageError(f"{what} names {name!r}, not a basis element; expected some of {list(names)}")
            v[names.index(name)] = float(c)
        return v
    try:
        v = np.asarray(xi, dtype=float)
    except (TypeError, ValueError):
        raise UsageError(f"{what} must be {k} algebra coordinates, a basis name or a dict; got {xi!r}") from None
    if v.shape != (k,) or not np.all(np.isfinite(v)):
        raise UsageError(
            f"{what} must be {k} finite coordinates in the basis {list(names)}; got shape {v.shape} {v!r}"
        )
    return v


def subalgebra_basis(model: Model, elements, what: str) -> np.ndarray:
    """Rows = algebra vectors of ``elements`` (names, indices or coordinate vectors)."""
    if elements is None:
        return np.eye(model.algebra.dim)
    if isinstance(elements, (str, dict)) or np.ndim(elements) == 1 and not isinstance(elements[0], (str, int, np.integer)):
        elements = [elements]
    rows = []
    for e in elements:
        if isinstance(e, (int, np.integer)) and not isinstance(e, bool):
            if not 0 <= e < model.algebra.dim:
                raise UsageError(f"{what}: index {e} out of range for an algebra of dim {model.algebra.dim}")
            e = model.algebra.names[int(e)]
        rows.append(algebra_vector(model, e, what))
    B = np.stack(rows)
    if np.linalg.matrix_rank(B, tol=1e-10 * max(1.0, np.abs(B).max())) < B.shape[0]:
        raise UsageError(f"{what} elements are linearly dependent; expected independent algebra elements")
    return B


def check_commuting(model: Model, B: np.ndarray, what: str) -> None:
    C = model.algebra.structure_constants
    br = np.einsum("ia,jb,abc->ijc", B, B, C)
    if np.abs(br).max() > 1e-10 * max(1.0, np.abs(B).max() ** 2 * max(np.abs(C).max(), 1.0)):
        i, j, _ = np.unravel_index(np.argmax(np.abs(br)), br.shape)
        raise UsageError(f"{what} must commute (a torus); elements {i} and {j} have a nonzero bracket")


def field_along(model: Model, x, xi):
    """``X_xi(x) = sum_a xi_a X_{e_a}(x)`` (with the convention's flow sign)."""
    return xi @ model.fields_at(x)


def log_liouville(model: Model, x):
    """``log |Pf omega(x)|``: the density of ``omega^n / n!`` in the chart (Liouville measure)."""
    return 0.5 * jnp.linalg.slogdet(model.form_at(x))[1]


def chart_scale(model: Model, n: int = 256, seed: int = 12345) -> np.ndarray:
    """Typical size of chart coordinates from ``model.sample`` (per coordinate, and overall)."""
    rng = np.random.default_rng(seed)
    pts = np.stack([np.asarray(model.sample(rng), dtype=float) for _ in range(n)])
    return pts


def fmt(v, digits=4) -> str:
    """A vector for a repr: entries that are zero to round-off of its largest entry print as 0 (``diagnose.vec``)."""
    from ..diagnose import vec

    return vec(v, digits)
