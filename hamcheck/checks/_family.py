"""Members of a model family share compiled check programs: their parameters are traced.

A sweep checks ``build(**params)`` for many parameter sets. Built with Python
numbers, each member's functions close over its parameters as constants, which
jax bakes into the program text: every value traces and compiles a program of
its own, and jax's persistent cache cannot help because the texts differ.

A :class:`Family` member instead hands the runner its float parameters as a
vector ``theta``; the runner calls ``build`` again *inside* the trace with jax
scalars in their place, so the compiled program takes ``theta`` as an argument
and serves every member whose other parameters (ints, strings, bools: they
can change shapes) agree. The concrete member, built and validated as usual,
still supplies the sample points and probes, so each row is the check of that
member.

A ``build`` that cannot take traced values (Python control flow on a
parameter, a conversion to numpy or float, a shape from a parameter) raises
while tracing; the family is then marked *per member* with that reason and
every member is checked exactly as ``check(model)`` would, compiling its own
program. Nothing is lost but time, and the sweep says which happened.

>>> fam = Family(lambda s, n: None, {"s": 0.5, "n": 3}, Scope())
>>> fam.traced_names, fam.static, fam.theta
(('s',), (('n', 3),), array([0.5]))
"""

from __future__ import annotations

import contextlib
import contextvars
from dataclasses import dataclass, field

import numpy as np

from .. import cache
from .._jax import jax, jnp
from ._fingerprint import program_digest

__all__ = ["Family", "Scope", "compile_for", "shape_key"]

# (family, model) while check(model, _family=family) runs: the small programs a check's
# judging compiles (the degeneracy search) are then shared by the family too.
_ACTIVE = contextvars.ContextVar("hamcheck_active_family", default=None)


def _is_float(v) -> bool:
    return isinstance(v, (float, np.floating)) and not isinstance(v, bool)


class Scope:
    """Owner of a family's shared programs for one sweep: they die with it.

    Keyed on ``build`` itself, a program would outlive the sweep and serve the next
    one, even after a global that ``build`` reads was changed (a notebook cell
    edited and rerun); a fresh scope per sweep makes that impossible. Across
    sweeps, jax's persistent cache (keyed on the program text) still serves them.
    """


def shape_key(params) -> tuple:
    """What besides array shapes tells programs of one family apart: the static values and traced names."""
    static = tuple((k, repr(v)) for k, v in params.items() if not _is_float(v))
    return ("family", static, tuple(k for k, v in params.items() if _is_float(v)))


@dataclass(frozen=True, repr=False)
class Family:
    """One member of ``build``'s family: ``params`` split into traced floats and static values.

    ``scope`` (a :class:`Scope`, one per sweep) owns the programs the members share.
    """

    build: object
    params: dict
    scope: Scope
    traced_names: tuple = field(init=False)
    static: tuple = field(init=False)
    theta: np.ndarray = field(init=False)

    def __post_init__(self):
        names = tuple(k for k, v in self.params.items() if _is_float(v))
        object.__setattr__(self, "traced_names", names)
        object.__setattr__(self, "static", tuple((k, v) for k, v in self.params.items() if k not in names))
        object.__setattr__(self, "theta", np.array([float(self.params[k]) for k in names], dtype=np.float64))

    def __repr__(self) -> str:
        return f"Family({getattr(self.build, '__name__', 'build')}: traced {list(self.traced_names)}, static {dict(self.static)})"

    def program_key(self, key: tuple) -> tuple:
        """``key`` of a program, made the family's: static values, traced names, the length of theta."""
        return key + shape_key(self.params) + (self.theta.shape,)

    @property
    def shareable(self) -> bool:
        """Some parameter to trace and no refusal recorded for this shape."""
        return bool(self.traced_names) and self.refusal is None

    def _refusals(self) -> list:
        # a one-slot list held by the scope: refuse() fills it, every later member of the shape reads it
        return cache.compiled(self.scope, ("refused",) + shape_key(self.params), lambda _scope: [None])

    @property
    def refusal(self) -> str | None:
        """Why members of this shape get programs of their own, once a traced build failed."""
        return self._refusals()[0]

    def refuse(self, exc: Exception) -> None:
        text = " ".join(str(exc).split())[:160]
        self._refusals()[0] = f"build(**params) could not take traced {', '.join(self.traced_names)} ({type(exc).__name__}: {text})"

    @contextlib.contextmanager
    def active(self, model):
        """While inside, :func:`compile_for` on ``model`` (this member) compiles for the family."""
        token = _ACTIVE.set((self, model))
        try:
            yield
        finally:
            _ACTIVE.reset(token)

    def member(self, theta):
        """``build`` with the traced values ``theta`` in place of the float parameters (call inside a trace)."""
        from ..model import Model, declaring_traced_member

        args = dict(self.static)
        args.update({k: theta[i] for i, k in enumerate(self.traced_names)})
        with declaring_traced_member():  # the concrete member of these parameters was validated
            model = self.build(**args)
        if not isinstance(model, Model):
            raise TypeError(f"build returned {type(model).__name__} for traced parameters")
        return model


def _compile(jitted, specs, options):
    """``jitted`` lowered and compiled at ``specs``."""
    lowered, constants = cache.lower_program(jitted, *specs)
    return cache.compile_lowered(lowered, options, constants=constants)


def compile_for(model, key, make, specs, options=None):
    """``jax.jit(make(model))`` lowered at ``specs`` and compiled once per model, as a callable.

    When ``model`` is the member of an active family (:meth:`Family.active`), the
    program takes the family's traced parameters and is kept for the whole family;
    if that fails, the refusal is recorded and the model gets its own program.
    """
    active = _ACTIVE.get()
    if active is not None and active[1] is model and active[0].shareable:
        family = active[0]
        theta = jnp.asarray(family.theta)
        try:
            def lower(_build):
                fn = jax.jit(lambda th, *args: make(family.member(th))(*args))
                return _compile(fn, (jax.ShapeDtypeStruct(theta.shape, theta.dtype), *specs), options)

            prog = cache.compiled(family.scope, family.program_key(key), lower)
            return lambda *args: prog(theta, *args)
        except Exception as exc:
            family.refuse(exc)
    def build(m):  # from the program store when this model was checked before, in any process
        digest = program_digest(m, ("compile_for", key, repr(specs), repr(options)), None, builder=make)

        def fresh():
            prog = _compile(jax.jit(make(m)), specs, options)
            cache.store_program(digest, prog)
            return prog

        return cache.stored_program(digest, fresh) or fresh()

    return cache.compiled(model, key, build)
