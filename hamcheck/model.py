"""Declaring a Hamiltonian G-space: :class:`Convention` and :class:`Model`.

A model is a chart ``x in R^dim`` with

* ``form(x)``: the matrix ``omega_ij(x)``, so ``omega(u, v) = u^T form(x) v``;
* ``moment(x)``: the components ``<mu(x), e_a>`` in the algebra's basis;
* ``vector_fields(x)`` (row ``a`` is ``X_{e_a}(x)``) and/or ``action(g, x)``
  (a left action of the group element ``g``, a matrix);
* ``sample(rng)``: a random point of the chart's domain.

Declaration calls each function once at a sample point and raises
:class:`~hamcheck.ModelError` with the function, the expected shape and the
shape it returned, so mistakes in the declaration surface before any check.

Example
-------
>>> import numpy as np, jax.numpy as jnp
>>> from hamcheck import LieAlgebra, Model, check
>>> u1 = LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])], names=["rot"])
>>> plane = Model("plane", 2, form=lambda x: jnp.array([[0.0, 1.0], [-1.0, 0.0]]),
...               algebra=u1, moment=lambda x: jnp.array([-(x[0]**2 + x[1]**2) / 2]),
...               action=lambda g, x: g @ x)
>>> check(plane, points=8).passed
True
"""

from __future__ import annotations

import contextlib
import contextvars
import sys
import os
from dataclasses import dataclass

import numpy as np

from ._jax import jax, jnp
from .algebra import LieAlgebra
from .differentiation import AUTODIFF, FiniteDifferences
from .errors import FrozenModelError, ModelError

__all__ = ["Convention", "Model"]

_DERIVATIVES = ("autodiff", "finite-differences")

# True while a sweep's build(**params) runs inside a trace with traced parameters
# (checks/_family.py): the functions then close over tracers and cannot be evaluated
# at concrete points, and the concrete member of the same parameters was validated.
_TRACED_MEMBER = contextvars.ContextVar("hamcheck_traced_member", default=False)


@contextlib.contextmanager
def declaring_traced_member():
    """Models declared inside skip validation (see ``checks/_family.py``)."""
    token = _TRACED_MEMBER.set(True)
    try:
        yield
    finally:
        _TRACED_MEMBER.reset(token)


@dataclass(frozen=True)
class Convention:
    """The sign convention a model is declared in.

    The model satisfies ``iota_{X_xi} omega = sign * d<mu, xi>`` with
    ``X_xi(m) = d/dt|0 exp(flow * t * xi) . m`` and ``(iota_X omega)_j =
    X^i omega_ij`` (contraction in the first slot). Only the product
    ``sign * flow`` enters the moment equation and the equivariance identity
    ``omega(X_xi, X_eta) = sign * flow * <mu, [xi, eta]>``; ``flow`` also fixes
    the bracket relation ``[X_xi, X_eta] = -flow * X_[xi, eta]`` of the
    fundamental vector fields (vector-field bracket ``[X, Y] = (DY) X - (DX) Y``).
    """

    sign: int = +1
    flow: int = +1

    def __post_init__(self):
        for field in ("sign", "flow"):
            v = getattr(self, field)
            if v not in (1, -1):
                raise ModelError(f"Convention.{field} must be +1 or -1; got {v!r}")

    @property
    def effective_sign(self) -> int:
        """``sign * flow``: the sign in ``omega(X_xi, X_eta) = s <mu, [xi, eta]>``."""
        return self.sign * self.flow


def _caller_file() -> str | None:
    """The file that declares the model, for replay commands.

    The nearest module-level frame (a model file being imported, possibly
    through a helper that builds variants) wins; otherwise the nearest frame
    outside hamcheck (a model built inside a function).
    """
    here = os.path.dirname(os.path.abspath(__file__))
    first = None
    try:  # the caller's caller, then outwards (inspect.stack() read every frame's source: 37 ms a model)
        frame = sys._getframe(2)
    except ValueError:
        return None
    while frame is not None:
        filename, function, frame = frame.f_code.co_filename, frame.f_code.co_name, frame.f_back
        path = os.path.abspath(filename)
        if path.startswith(here) or filename.startswith("<"):
            continue
        if "site-packages" in path or path.startswith(os.path.dirname(os.__file__)):
            break
        first = first or path
        if function == "<module>":
            return path
    return first


def _validate_domain(domain, dim):
    """Per-coordinate bounds ``((lo, hi), ...)`` of a full-measure chart, infinite allowed."""
    if domain is None:
        return None
    try:
        box = np.asarray(domain, dtype=float)
    except (TypeError, ValueError):
        raise ModelError(f"domain must be per-coordinate bounds ((lo, hi), ...); got {domain!r}") from None
    if box.shape != (dim, 2):
        raise ModelError(f"domain has shape {box.shape}; expected ({dim}, 2): one (lo, hi) pair per coordinate")
    if np.any(np.isnan(box)) or np.any(box[:, 0] >= box[:, 1]):
        raise ModelError(f"domain bounds must satisfy lo < hi for every coordinate; got {box.tolist()}")
    return tuple((float(lo), float(hi)) for lo, hi in box)


def _embedding_size(model) -> int:
    """Length of ``model.embedding(x)``, from its shape alone (no evaluation when jax traces it)."""
    if model.traced:
        return int(jax.eval_shape(model.embedding, jax.ShapeDtypeStruct((model.dim,), jnp.float64)).shape[0])
    return int(np.asarray(model.embedding(np.asarray(model.sample(np.random.default_rng(0)), dtype=float))).shape[0])


def _validate_charts(model, charts) -> tuple:
    """The other charts of ``model``'s atlas: Models of the same manifold, each with an embedding like its own."""
    if charts is None:
        return ()
    if isinstance(charts, Model) or not isinstance(charts, (tuple, list)):
        raise ModelError(f"charts must be a tuple of hamcheck.Model (the other charts of the atlas); got {type(charts).__name__}")
    charts = tuple(charts)
    if charts and model.embedding is None:
        raise ModelError(
            "charts need embedding(x) on the main chart (and on each chart): the map into a space shared by every "
            "chart, by which a fixed point found in two charts is recognised as one"
        )
    C = model.algebra.structure_constants
    for i, c in enumerate(charts, 1):
        what = f"charts[{i - 1}]"
        if not isinstance(c, Model):
            raise ModelError(f"{what} must be a hamcheck.Model (a chart with its own functions); got {type(c).__name__}")
        if c.charts:
            raise ModelError(f"{what} ({c.name!r}) declares charts of its own; declare the whole atlas on the main chart")
        problems = []
        if c.dim != model.dim:
            problems.append(f"dim {c.dim} (expected {model.dim})")
        if c.algebra.names != model.algebra.names or c.algebra.structure_constants.shape != C.shape or not np.allclose(
            c.algebra.structure_constants, C, rtol=1e-12, atol=1e-12 * max(1.0, float(np.abs(C).max(initial=0)))
        ):
            problems.append(f"algebra {list(c.algebra.names)} (expected the main chart's {list(model.algebra.names)}, same brackets)")
        if c.convention != model.convention:
            problems.append(f"convention {c.convention} (expected {model.convention})")
        if c.derivatives != model.derivatives:
            problems.append(f"derivatives {c.derivatives!r} (expected {model.derivatives!r})")
        if c.embedding is None:
            problems.append("no embedding(x)")
        elif not problems and _embedding_size(c) != _embedding_size(model):
            problems.append(f"embedding of length {_embedding_size(c)} (expected {_embedding_size(model)}, the main chart's)")
        if problems:
            raise ModelError(f"{what} ({c.name!r}) is not a chart of the same space: " + "; ".join(problems))
    return charts


def _shape(value) -> tuple:
    return tuple(np.shape(value))


class Model:
    """A Hamiltonian G-space in a chart, ready to be checked.

    Parameters
    ----------
    name : str
        Used in reports and replay commands.
    dim : int
        Dimension of the chart.
    form : callable ``x -> (dim, dim)``
    algebra : LieAlgebra
    moment : callable ``x -> (algebra.dim,)``
    vector_fields : callable ``x -> (algebra.dim, dim)``, optional
        Row ``a`` is ``X_{e_a}(x)`` in the model's convention (so it includes
        the ``flow`` sign). Derived from ``action`` by autodiff when omitted.
    action : callable ``(g, x) -> (dim,)``, optional
        Left action of a group element ``g`` (a matrix, jax array).
    sample : callable ``rng -> (dim,)``, optional
        A random point of the chart's domain from a ``numpy.random.Generator``.
        Default: standard normal in ``R^dim``.
    convention : Convention
    derivatives : ``"autodiff"`` (default) or ``"finite-differences"``
        The fallback for functions written in plain numpy that jax cannot
        trace: central differences with widened tolerances, marked in every
        report. Never chosen automatically.
    domain : ``((lo, hi), ...)``, optional
        Per-coordinate bounds of a chart covering the manifold up to measure
        zero (infinite bounds allowed), used by the integrals of the theory.
    chart_labels : sequence of str, optional
        Names of the coordinates, for tables and plots.
    source : str, optional
        The file declaring the model, for replay commands (default: found
        from the caller's frame).
    construction : frozen record, optional
        What a builder knows about the model it built (the base point and
        grid of a truncated orbit chart, say); ``None`` for hand-made models.
    charts : tuple of Model, optional
        The other charts of an atlas: each a Model of the same manifold (same
        dim, algebra and convention) with its own form, moment, vector fields
        or action, sample and domain, in its own coordinates. The consequences
        that need every fixed point (:func:`~hamcheck.fixed_points` and what
        sums over them) search every chart. Needs ``embedding`` on every chart.
    embedding : callable ``x -> (N,)``, optional
        The chart's map into a space ``R^N`` shared by every chart of the atlas
        (homogeneous coordinates as a projector, a sphere in ``R^3``): a point
        found in two charts is one point when its images agree.

    A declared model is immutable: setting an attribute raises
    :class:`~hamcheck.FrozenModelError`; :meth:`replace` returns a copy with
    other metadata.
    """

    _FROZEN_HINT = "a declared Model is immutable; use model.replace(...) or declare a new Model"

    def __init__(
        self,
        name,
        dim,
        form,
        algebra,
        moment,
        *,
        vector_fields=None,
        action=None,
        sample=None,
        convention=Convention(),
        derivatives="autodiff",
        domain=None,
        chart_labels=None,
        source=None,
        construction=None,
        charts=(),
        embedding=None,
    ):
        if not isinstance(name, str) or not name:
            raise ModelError(f"name must be a non-empty string; got {name!r}")
        if isinstance(dim, bool) or not isinstance(dim, (int, np.integer)) or dim < 1:
            raise ModelError(f"dim must be a positive integer; got {dim!r}")
        if not isinstance(algebra, LieAlgebra):
            raise ModelError(
                f"algebra must be a hamcheck.LieAlgebra (use LieAlgebra.from_matrices); got {type(algebra).__name__}"
            )
        if not isinstance(convention, Convention):
            raise ModelError(f"convention must be a hamcheck.Convention; got {type(convention).__name__}")
        if derivatives not in _DERIVATIVES:
            raise ModelError(f"derivatives must be one of {_DERIVATIVES}; got {derivatives!r}")
        for label, fn, required in (
            ("form", form, True),
            ("moment", moment, True),
            ("vector_fields", vector_fields, False),
            ("action", action, False),
            ("sample", sample, False),
            ("embedding", embedding, False),
        ):
            if (required or fn is not None) and not callable(fn):
                raise ModelError(f"{label} must be a callable; got {type(fn).__name__}")
        if vector_fields is None and action is None:
            raise ModelError("give vector_fields(x) or action(g, x) (or both): the checks need the group's vector fields")
        if action is not None and not algebra.is_matrix:
            raise ModelError(
                "action(g, x) needs group elements, but the algebra was declared by structure constants; "
                "declare it with LieAlgebra.from_matrices or give vector_fields instead"
            )

        if chart_labels is not None:
            chart_labels = tuple(chart_labels)
            if len(chart_labels) != int(dim):
                raise ModelError(f"chart_labels has {len(chart_labels)} entries; expected one per coordinate ({dim})")
        set_ = super().__setattr__
        set_("name", name)
        set_("dim", int(dim))
        set_("algebra", algebra)
        set_("convention", convention)
        set_("derivatives", derivatives)
        set_("form", form)
        set_("moment", moment)
        set_("vector_fields", vector_fields)
        set_("action", action)
        dim_ = int(dim)
        set_("sample", sample if sample is not None else (lambda rng: rng.standard_normal(dim_)))
        set_("source", source if source is not None else _caller_file())
        set_("ops", AUTODIFF if derivatives == "autodiff" else FiniteDifferences())
        # Integration domain of the chart (used by hamcheck.localization and friends): per-coordinate
        # bounds ((lo, hi), ...), infinite allowed, covering the manifold up to a set of measure zero.
        set_("domain", _validate_domain(domain, dim_))
        set_("chart_labels", chart_labels)
        set_("construction", construction)
        set_("embedding", embedding)
        if _TRACED_MEMBER.get():
            set_("charts", tuple(charts or ()))
        else:
            self._validate()
            set_("charts", _validate_charts(self, charts))
        set_("_frozen", True)

    def __setattr__(self, key, value):
        raise FrozenModelError(f"cannot set Model.{key}: {self._FROZEN_HINT}")

    def __delattr__(self, key):
        raise FrozenModelError(f"cannot delete Model.{key}: {self._FROZEN_HINT}")

    _REPLACEABLE = ("name", "source", "chart_labels", "construction", "charts")

    def replace(self, **changes) -> "Model":
        """A copy with other metadata (``name``, ``source``, ``chart_labels``, ``construction``, ``charts``).

        The functions are shared, so the copy is not validated again (new
        ``charts`` are checked against it). To change a function, declare a new
        Model. ``model.replace(charts=())`` keeps the main chart alone.
        """
        bad = sorted(set(changes) - set(self._REPLACEABLE))
        if bad:
            raise ModelError(
                f"Model.replace() changes only {', '.join(self._REPLACEABLE)}; got {', '.join(bad)} "
                "(declare a new Model to change its functions)"
            )
        if "name" in changes and (not isinstance(changes["name"], str) or not changes["name"]):
            raise ModelError(f"name must be a non-empty string; got {changes['name']!r}")
        if changes.get("chart_labels") is not None:
            changes["chart_labels"] = tuple(changes["chart_labels"])
            if len(changes["chart_labels"]) != self.dim:
                raise ModelError(f"chart_labels has {len(changes['chart_labels'])} entries; expected {self.dim}")
        if "charts" in changes:
            changes["charts"] = _validate_charts(self, changes["charts"])
        new = object.__new__(Model)
        for key, value in self.__dict__.items():
            object.__setattr__(new, key, changes.get(key, value))
        return new

    # ------------------------------------------------------------- properties
    @property
    def has_action(self) -> bool:
        return self.action is not None

    @property
    def atlas(self) -> tuple:
        """The main chart (this model) followed by ``charts``: index ``k`` is the ``chart`` of a fixed point."""
        return (self,) + self.charts

    @property
    def traced(self) -> bool:
        """True when the model is differentiated by jax (jit and vmap over points)."""
        return self.ops.traced

    def __repr__(self) -> str:
        parts = [f"name={self.name!r}", f"dim={self.dim}", f"algebra dim={self.algebra.dim}"]
        parts.append("action" if self.has_action else "vector fields")
        if self.convention != Convention():
            parts.append(f"sign={self.convention.sign}, flow={self.convention.flow}")
        if not self.traced:
            parts.append("finite differences")
        if self.charts:
            parts.append(f"{1 + len(self.charts)} charts")
        return f"Model({', '.join(parts)})"

    # --------------------------------------------- functions the checks call
    def _asarray(self, value):
        return jnp.asarray(value, dtype=jnp.float64) if not jnp.iscomplexobj(value) else jnp.asarray(value)

    def form_at(self, x):
        return jnp.asarray(self.form(self._arg(x)), dtype=jnp.float64)

    def moment_at(self, x):
        return jnp.asarray(self.moment(self._arg(x)), dtype=jnp.float64)

    def action_at(self, g, x):
        return jnp.asarray(self.action(self._arg(g), self._arg(x)), dtype=jnp.float64)

    def action_fields_at(self, x):
        """``flow * d/dt|0 action(exp(t e_a), x)`` for every basis element ``a``.

        The derivative is taken along the matrix ``e_a`` at the identity, which
        equals the derivative along ``exp(t e_a)`` and avoids differentiating
        the matrix exponential (slow to compile, and not needed).
        """
        basis = self.algebra.basis
        ident = np.eye(basis.shape[1], dtype=basis.dtype)
        act = lambda g: self.action_at(g, x)  # noqa: E731
        flow = self.convention.flow
        if self.traced:
            ident_j = jnp.asarray(ident)
            rows = jax.vmap(lambda E: jax.jvp(act, (ident_j,), (E,))[1])(jnp.asarray(basis))
        else:
            rows = jnp.stack([self.ops.jvp(act, ident, E) for E in basis])
        return flow * rows

    def fields_at(self, x):
        """The fundamental vector fields ``X_{e_a}(x)`` as an ``(algebra.dim, dim)`` array."""
        if self.vector_fields is not None:
            return jnp.asarray(self.vector_fields(self._arg(x)), dtype=jnp.float64)
        return self.action_fields_at(x)

    def _arg(self, x):
        return x if self.traced else np.asarray(x)

    # ------------------------------------------------------------ validation
    def _validate(self) -> None:
        rng = np.random.default_rng(0)
        try:
            x0 = np.asarray(self.sample(rng), dtype=float)
        except Exception as exc:  # the user's function: report, do not crash
            raise ModelError(f"sample(rng) raised {type(exc).__name__}: {exc}") from None
        if x0.shape != (self.dim,):
            raise ModelError(f"sample(rng) returned shape {x0.shape}; expected ({self.dim},) for dim={self.dim}")
        if not np.all(np.isfinite(x0)):
            raise ModelError(f"sample(rng) returned a non-finite point {x0}; expected a point of the chart's domain")
        if self.traced and self._valid_in_one_program(x0):
            return
        # the slow path, one function at a time, says exactly what is wrong
        k, d = self.algebra.dim, self.dim
        ident = np.eye(self.algebra.basis.shape[1], dtype=self.algebra.basis.dtype) if self.algebra.is_matrix else None
        expected = {
            "form": ((d, d), lambda x: self.form(x), f"for dim={d}"),
            "moment": ((k,), lambda x: self.moment(x), f"for an algebra of dim {k}"),
        }
        if self.vector_fields is not None:
            expected["vector_fields"] = ((k, d), lambda x: self.vector_fields(x), f"(algebra dim {k}, dim {d})")
        if self.action is not None:
            expected["action"] = ((d,), lambda x: self.action(self._eager_group(ident), x), f"for dim={d}")
        call = {"form": "form(x)", "moment": "moment(x)", "vector_fields": "vector_fields(x)", "action": "action(g, x)",
                "embedding": "embedding(x)"}
        for label, (shape, fn, why) in expected.items():
            try:
                value = fn(x0)
            except Exception as exc:
                raise ModelError(
                    f"{call[label]} raised {type(exc).__name__}: {exc} (at the sample point x = {np.array2string(x0, precision=4)})"
                ) from None
            if _shape(value) != shape:
                raise ModelError(f"{call[label]} returned shape {_shape(value)}; expected {shape} {why}")
            if np.iscomplexobj(np.asarray(value)) and np.any(np.imag(np.asarray(value)) != 0):
                raise ModelError(f"{call[label]} returned complex values; expected a real array of shape {shape}")
        if self.embedding is not None:
            self._check_embedding(x0, call["embedding"])
        if self.traced:
            self._check_traceable(x0, ident, call)
        # derived vector fields exercise exp and the action's derivative
        if self.action is not None and self.vector_fields is None:
            try:
                X = np.asarray(self.fields_at(jnp.asarray(x0) if self.traced else x0))
            except Exception as exc:
                raise ModelError(
                    f"deriving the vector fields from action(g, x) failed: {type(exc).__name__}: {exc}"
                ) from None
            if X.shape != (k, d):
                raise ModelError(f"derived vector fields have shape {X.shape}; expected {(k, d)}")

    def _valid_in_one_program(self, x0) -> bool:
        """Every function (and the derived vector fields) traced at ``x0``'s shape, all as declared.

        ``jax.eval_shape`` traces without compiling: dispatching each jax operation of
        the user's functions eagerly compiled every operation on its own (about 1 s
        for the sphere), and one jitted program of them still cost 0.3-0.6 s per
        model, every member of a sweep again. Values at ``x0`` are the checks' job
        (their ``_evaluate`` kernel), except the embedding's, evaluated here.
        False on anything unexpected: the caller then finds and names the problem.
        """
        k, d = self.algebra.dim, self.dim
        expected = {"form": (d, d), "moment": (k,), "fields": (k, d)}
        if self.vector_fields is not None:
            expected["vector_fields"] = (k, d)
        if self.action is not None:
            expected["action"] = (d,)
        ident = np.eye(self.algebra.basis.shape[1], dtype=self.algebra.basis.dtype) if self.algebra.is_matrix else None

        def values(x):
            out = {"form": self.form(x), "moment": self.moment(x), "fields": self.fields_at(x)}
            if self.vector_fields is not None:
                out["vector_fields"] = self.vector_fields(x)
            if self.action is not None:
                out["action"] = self.action(jnp.asarray(ident), x)
            if self.embedding is not None:
                out["embedding"] = self.embedding(x)
            return {key: jnp.asarray(v) for key, v in out.items()}

        try:  # shapes and dtypes by tracing alone: nothing to compile, nothing baked in per model
            got = jax.eval_shape(values, jax.ShapeDtypeStruct((d,), jnp.float64))
        except Exception:
            return False
        real = lambda a: not jnp.issubdtype(a.dtype, jnp.complexfloating)  # noqa: E731
        if not all(key in got and tuple(got[key].shape) == shape and real(got[key]) for key, shape in expected.items()):
            return False
        if self.embedding is not None:  # the one value validation looks at: where the chart's point lands
            e = got.get("embedding")
            if e is None or e.ndim != 1 or e.shape[0] < 1 or not real(e):
                return False
            try:
                # one small program: evaluated eagerly, each jax operation compiled on its own
                # (13 programs, 0.33 s for the sphere's two charts in a fresh process; jitted 0.10 s)
                if not bool(jax.jit(lambda x: jnp.all(jnp.isfinite(self.embedding(x))))(x0)):
                    return False
            except Exception:
                return False
        return True

    def _check_embedding(self, x0, call) -> None:
        try:
            e = np.asarray(self.embedding(jnp.asarray(x0) if self.traced else x0))
        except Exception as exc:
            raise ModelError(f"{call} raised {type(exc).__name__}: {exc} (at the sample point x = {np.array2string(x0, precision=4)})") from None
        if e.ndim != 1 or e.shape[0] < 1 or np.iscomplexobj(e) or not np.all(np.isfinite(e)):
            raise ModelError(
                f"{call} returned shape {e.shape} ({e.dtype}); expected a finite real vector (N,): the chart's point "
                "in a space shared by every chart of the atlas"
            )

    def _eager_group(self, ident):
        return jnp.asarray(ident) if self.traced else ident

    def _check_traceable(self, x0, ident, call) -> None:
        spec = jax.ShapeDtypeStruct((self.dim,), jnp.float64)
        fns = {"form": self.form, "moment": self.moment}
        if self.vector_fields is not None:
            fns["vector_fields"] = self.vector_fields
        if self.action is not None:
            g = jnp.asarray(ident)
            fns["action"] = lambda x: self.action(g, x)
        if self.embedding is not None:
            fns["embedding"] = self.embedding
        for label, fn in fns.items():
            try:
                jax.eval_shape(fn, spec)
            except Exception as exc:
                first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
                raise ModelError(
                    f"{call[label]} cannot be traced by jax ({type(exc).__name__}: {first[:160]}). "
                    "Fix: write it with jax.numpy (import jax.numpy as jnp) instead of numpy/math, or "
                    'declare Model(..., derivatives="finite-differences") to check it by finite '
                    "differences with widened tolerances"
                ) from None
