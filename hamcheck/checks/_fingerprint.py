"""What a check program is made of, as one digest: the key of the program store (``cache.stored_program``).

Re-checking an unchanged model in a new process still costs tracing and lowering
(1.5-2 s for the sphere) even when jax's persistent cache then finds the compiled
program: jax needs the lowered text to look it up. The program store keys the compiled
program on a digest that is cheap to compute instead, so a hit skips both. The digest
must change whenever the program could, so it covers everything the program is built
from:

* **hamcheck's own code**: every ``.py`` file of the package (the kernels, the shared
  point view, the integrator), the versions of jax and jaxlib, the devices, jax's
  configuration and the ``JAX_*``/``XLA_*`` environment;
* **the user's code, as jax sees it**: the jaxprs of ``form``, ``moment``,
  ``vector_fields`` and ``action`` at the chart's shapes, with the exact bytes of every
  constant and literal. A function that reads a changed global, file or random state
  traces to another jaxpr, so it gets another program;
* **the model's data the kernels read**: dim, convention, derivatives, the algebra's
  arrays, the domain;
* **the run's layout**: the program key of ``run.py`` (checks, batch, shapes), ``Settings``.

Where a jaxpr holds Python code jax would call later (``custom_jvp`` rules, callbacks,
any parameter that is a function) the digest is ``None`` and the run takes the ordinary
path: such code is invisible to a digest. So is code changed at run time inside
hamcheck (monkeypatching): the in-memory program cache has the same blind spot.
``HAMCHECK_CACHE_DIR=`` turns the store off with the rest of the cache.
"""

from __future__ import annotations

import dataclasses
import enum
import functools
import hashlib
import os
from pathlib import Path

import numpy as np

from .._jax import jax, jnp
from ..cache import compiled

from jax.extend import core as jcore  # noqa: E402  (ClosedJaxpr, Jaxpr, Literal)

#: Parameter value types whose ``repr`` is their whole content.
_PLAIN = (bool, int, float, complex, str, bytes, type(None), np.dtype, np.generic, enum.Enum, slice)


class _Opaque(Exception):
    """A jaxpr holds something a digest cannot see through (Python code called later)."""


@functools.cache
def environment() -> bytes:
    """hamcheck's source files, jax's versions, devices and configuration, as one digest."""
    h = hashlib.sha256()
    root = Path(__file__).resolve().parents[1]
    for path in sorted(root.rglob("*.py")):
        h.update(str(path.relative_to(root)).encode())
        h.update(path.read_bytes())
    import jaxlib

    h.update(repr((jax.__version__, jaxlib.__version__, [(d.platform, d.device_kind) for d in jax.devices()])).encode())
    h.update(repr(sorted((k, repr(v)) for k, v in jax.config.values.items())).encode())
    h.update(repr(sorted((k, v) for k, v in os.environ.items() if k.startswith(("JAX_", "XLA_")))).encode())
    return h.digest()


def _array(h, a) -> None:
    a = np.asarray(a)
    h.update(repr((a.shape, str(a.dtype))).encode())
    h.update(np.ascontiguousarray(a).tobytes())


def _param(h, value) -> None:
    if isinstance(value, jcore.ClosedJaxpr):
        _closed(h, value)
    elif isinstance(value, jcore.Jaxpr):
        _jaxpr(h, value)
    elif isinstance(value, (tuple, list, frozenset)):
        h.update(f"{type(value).__name__}{len(value)}(".encode())
        for v in (sorted(value, key=repr) if isinstance(value, frozenset) else value):
            _param(h, v)
        h.update(b")")
    elif isinstance(value, np.ndarray):
        _array(h, value)
    elif isinstance(value, _PLAIN):
        h.update(repr(value).encode())
    else:
        text = repr(value)
        if callable(value) or type(value).__name__ == "WrappedFun" or " at 0x" in text or "<lambda>" in text:
            raise _Opaque(type(value).__name__)
        h.update(f"{type(value).__module__}.{type(value).__qualname__}:{text}".encode())


def _jaxpr(h, jaxpr) -> None:
    h.update(str(jaxpr).encode())  # the wiring; values below, exactly
    for eqn in jaxpr.eqns:
        h.update(eqn.primitive.name.encode())
        for v in eqn.invars:
            if isinstance(v, jcore.Literal):
                _array(h, v.val)
        for key in sorted(eqn.params):
            h.update(key.encode())
            _param(h, eqn.params[key])


def _closed(h, closed) -> None:
    for c in closed.consts:
        _array(h, c)
    _jaxpr(h, closed.jaxpr)


def _model_digest(model) -> bytes | None:
    """The digest of what the kernels read from ``model``; None when part of it is opaque."""
    from ..algebra import LieAlgebra
    from ..model import Model

    algebra = model.algebra
    # a subclass may override form_at or Ad: code the digest does not see
    if not model.traced or type(model) is not Model or type(algebra) is not LieAlgebra:
        return None
    h = hashlib.sha256()
    h.update(repr((model.dim, model.convention, model.derivatives, model.domain, type(algebra).__qualname__)).encode())
    try:
        for f in dataclasses.fields(algebra):  # declared fields only: lazily cached values would vary
            value = getattr(algebra, f.name)
            h.update(f.name.encode())
            if isinstance(value, (np.ndarray, jax.Array)):
                _array(h, value)
            else:
                _param(h, value)
        x = jax.ShapeDtypeStruct((model.dim,), jnp.float64)
        functions = {"form": (model.form, (x,)), "moment": (model.moment, (x,))}
        if model.vector_fields is not None:
            functions["vector_fields"] = (model.vector_fields, (x,))
        if model.action is not None:
            basis = np.asarray(algebra.basis)
            functions["action"] = (model.action, (jax.ShapeDtypeStruct(basis.shape[1:], basis.dtype), x))
        for name, (fn, args) in functions.items():
            h.update(name.encode())
            _closed(h, jax.make_jaxpr(fn)(*args))
    except Exception:  # opaque code, or a function that does not trace: no digest, the ordinary path
        return None
    return h.digest()


def _code(h, fn) -> None:
    """A program builder of hamcheck's own (its source is in :func:`environment`) and what it closes over."""
    if not getattr(fn, "__module__", "").startswith("hamcheck."):
        raise _Opaque(f"{fn!r} is not hamcheck's")
    h.update(f"{fn.__module__}.{fn.__qualname__}".encode())
    for cell in fn.__closure__ or ():
        _param(h, cell.cell_contents)


def program_digest(model, key, settings, builder=None) -> str | None:
    """The store key of the program ``key`` of ``model`` under ``settings``; None: do not store it.

    ``builder`` is the hamcheck function that makes the program from the model, when
    ``key`` alone does not name it (``_family.compile_for``).
    """
    digest = compiled(model, ("program-digest",), _model_digest)  # traced once per model
    if digest is None:
        return None
    h = hashlib.sha256(environment())
    h.update(digest)
    h.update(repr(key).encode())
    h.update(repr(settings).encode())
    if builder is not None:
        try:
            _code(h, builder)
        except _Opaque:
            return None
    return h.hexdigest()
