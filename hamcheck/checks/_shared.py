"""One traced point's view of a model: what several kernels need is computed once.

Every kernel of a ``check()`` runs inside one jitted program, point by point.
Several of them need the same things at the point ``x``: the form matrix, the
fundamental vector fields, the Jacobian of the moment map, and directional
derivatives of the form and of the fields. :class:`SharedPoint` wraps the model
for one traced point and keeps those values, so

* ``form_at(x)``, ``fields_at(x)``, ``moment_at(x)`` are traced once;
* ``ops.jvp(form_at, x, v)`` and ``ops.vjp(form_at, x, w)`` (the same for
  ``fields_at``, ``moment_at``) evaluate one shared linearization
  (``jax.linearize``) and its transpose, instead of re-deriving the function
  for every kernel and every probe direction;
* ``ops.jacobian(f, x)`` is the shared linearization applied to the unit vectors.

Kernels are unchanged: they still call ``model.form_at`` and ``model.ops`` and
run eagerly under finite differences (where no ``SharedPoint`` is used).
Calls at any other point (inside a derivative, at ``g.x``) go to the model.

>>> import jax.numpy as jnp, numpy as np, hamcheck                    # doctest: +SKIP
>>> view = SharedPoint(model, jnp.zeros(model.dim))                      # doctest: +SKIP
>>> view.ops.jvp(view.form_at, view.point, jnp.ones(model.dim))          # doctest: +SKIP
"""

from __future__ import annotations

from .._jax import jax, jnp
from ..differentiation import AUTODIFF

__all__ = ["SharedPoint"]

_SHARED = ("form_at", "moment_at", "fields_at")


class SharedPoint:
    """The model, with its functions and their linearizations at one point kept (see the module)."""

    def __init__(self, model, x):
        self._model = model
        self.point = x
        self._memo = {}

    @property
    def ops(self):
        # made on each use: a stored one would form a cycle (view <-> ops) that keeps the
        # model alive until the garbage collector runs
        return _SharedOps(self)

    def __getattr__(self, name):  # everything else is the model's
        return getattr(self._model, name)

    def _value(self, name, y):
        if y is not self.point:
            return getattr(self._model, name)(y)
        if name not in self._memo:
            self._memo[name] = getattr(self._model, name)(y)
        return self._memo[name]

    def form_at(self, y):
        return self._value("form_at", y)

    def moment_at(self, y):
        return self._value("moment_at", y)

    def fields_at(self, y):
        return self._value("fields_at", y)

    def linearized(self, name):
        """``(jvp, vjp)`` of the model's function ``name`` at the point, built once."""
        key = ("linear", name)
        if key not in self._memo:
            primal, jvp = jax.linearize(getattr(self._model, name), self.point)
            self._memo.setdefault(name, primal)
            transpose = jax.linear_transpose(jvp, self.point)
            self._memo[key] = (jvp, lambda w: transpose(jnp.asarray(w, dtype=primal.dtype))[0])
        return self._memo[key]

    def shared_name(self, f, y):
        """The name of ``f`` when it is one of this view's kept functions called at the point, else None."""
        if y is not self.point or getattr(f, "__self__", None) is not self:
            return None
        name = getattr(f, "__name__", None)
        return name if name in _SHARED else None


class _SharedOps:
    """``jvp``/``vjp``/``jacobian`` through the shared linearization where it applies."""

    name = AUTODIFF.name
    traced = True

    def __init__(self, view: SharedPoint):
        self._view = view

    def jvp(self, f, x, v):
        name = self._view.shared_name(f, x)
        return AUTODIFF.jvp(f, x, v) if name is None else self._view.linearized(name)[0](v)

    def vjp(self, f, x, w):
        name = self._view.shared_name(f, x)
        return AUTODIFF.vjp(f, x, w) if name is None else self._view.linearized(name)[1](w)

    def jacobian(self, f, x):
        name = self._view.shared_name(f, x)
        if name is None:
            return AUTODIFF.jacobian(f, x)
        jvp = self._view.linearized(name)[0]
        return jax.vmap(jvp, out_axes=-1)(jnp.eye(x.shape[0], dtype=x.dtype))
