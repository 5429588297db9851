"""The check protocol: the frozen :class:`Check` record, its :class:`Tolerance`, shared kernel helpers.

A check module builds one ``Check`` and the registry (:mod:`hamcheck.checks._registry`)
lists it; the runner (:mod:`hamcheck.checks.run`) reads everything it needs
from the record, so it never branches on a check's name.

>>> from hamcheck.checks import check_named
>>> c = check_named("nondegenerate")
>>> c.compare, c.passes(1e-3, 1e-10), c.passes(1e-17, 1e-10)
('above', True, False)
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from .._jax import jax, jnp
from ..diagnose import Diagnosis
from ..errors import UsageError

__all__ = ["Check", "Tolerance", "TINY", "COMPARISONS", "signed"]

#: The smallest normal float64: guards every division by a bound that may vanish.
TINY = np.finfo(np.float64).tiny

#: ``below``: the residual must stay at or below the tolerance (an identity's defect);
#: ``above``: it must stay at or above it (a margin, e.g. a relative singular value).
COMPARISONS = ("below", "above")


@dataclass(frozen=True)
class Tolerance:
    """A check's default tolerance and why; ``finite_differences`` widens it for eager models.

    >>> Tolerance(1e-12, "500x above the float64 floor").for_derivatives(traced=False)
    1e-12
    """

    default: float
    reason: str
    finite_differences: float | None = None  # None: no derivative involved, the same as `default`
    finite_differences_reason: str = ""

    def for_derivatives(self, traced: bool) -> float:
        if traced or self.finite_differences is None:
            return self.default
        return self.finite_differences


#: Reasons shared by several checks' tolerances (each check names its own values).
FIRST_DERIVATIVES = (
    "relative residual of an identity between first derivatives computed by autodiff; measured floors are "
    "<= 3e-16 up to dim 512, so 1e-12 leaves a factor 500+"
)
CENTRAL_DIFFERENCES = (
    "central differences at the best step reach 3e-11 to 7e-11 relative (measured with numpy); 1e-8 sits "
    "100x above that floor and still far below real mistakes"
)
NESTED_DIFFERENCES = (
    "differences of vector fields that are themselves differences of the action (nested differences) lose "
    "about half the digits: 2e-8 measured on the numpy sphere"
)
GROUP_ELEMENTS = (
    "it goes through the matrix exponential and inverse of sampled group elements, whose round-off grows with "
    "their norm (1e-14 seen at the default sampling scale)"
)


def _no_probes(model, rng, n, settings):
    return {}


def _always(model, settings):
    return None


def _no_diagnosis(evidence) -> Diagnosis:
    return Diagnosis()


def _plain_residual(outputs) -> np.ndarray:
    return np.asarray(outputs["residual"], dtype=float)


@dataclass(frozen=True)
class Check:
    """One axiom and everything about it.

    * ``statement(sign, flow) -> str``: the condition in the model's convention
      (the one template: results, ``--explain`` and docs all use it);
    * ``kernel(model, x, probe) -> dict``: pure and per point, returns ``"residual"``
      (relative) and whatever ``diagnose`` needs;
    * ``tolerance``: default, reason, finite-difference widening; ``extra_tolerances``
      are further named tolerances the check's diagnosis uses;
    * ``diagnose(Evidence) -> Diagnosis``: findings with fixes (and trust notes);
    * ``probes(model, rng, n, settings) -> dict``: random inputs per point, in numpy;
    * ``applies(model, settings) -> str | None``: the reason to skip;
    * ``compare``: ``"below"`` (a defect) or ``"above"`` (a margin), see :data:`COMPARISONS`;
    * ``residuals(outputs) -> (n,)``: the per-point values compared, from the kernel's
      outputs over all points (default ``outputs["residual"]``);
    * ``refine(model, points, residuals, outputs, settings) -> (points, residuals, note)``:
      an optional search beyond the samples (the degenerate-point search);
    * ``prepare(model, settings)``: optional, called after the probes are drawn and
      before the programs compile: start work the check will need later that can
      overlap compilation (the degenerate-point search imports its optimiser);
    * ``own_program``: compile the kernel as a program of its own, in parallel with the
      program the other kernels share (for a kernel whose compilation dominates and
      which shares little with the others, such as the flow check's Runge-Kutta steps);
    * ``finding_kinds``: the kinds ``diagnose`` can report (listed in ``FINDING_KINDS``).
    """

    name: str
    statement: Callable[[int, int], str]
    kernel: Callable
    tolerance: Tolerance
    diagnose: Callable = field(default=_no_diagnosis)
    probes: Callable = field(default=_no_probes)
    applies: Callable = field(default=_always)
    compare: str = "below"
    residuals: Callable = field(default=_plain_residual)
    refine: Callable | None = None
    prepare: Callable | None = None
    own_program: bool = False
    finding_kinds: tuple[str, ...] = ()
    extra_tolerances: tuple[tuple[str, Tolerance], ...] = ()

    def __post_init__(self):
        if self.compare not in COMPARISONS:
            raise UsageError(f"Check {self.name!r}: compare={self.compare!r}; expected one of {COMPARISONS}")

    def __repr__(self) -> str:
        return f"Check({self.name}: residual {self.compare} {self.tolerance.default:.0e})"

    @property
    def higher_is_better(self) -> bool:
        return self.compare == "above"

    def state(self, convention=(1, 1)) -> str:
        """The statement with ``convention`` (a ``Convention`` or ``(sign, flow)``) substituted."""
        sign, flow = (convention.sign, convention.flow) if hasattr(convention, "sign") else convention
        return self.statement(int(sign), int(flow))

    def worst(self, values: np.ndarray) -> int:
        return int(np.argmin(values) if self.higher_is_better else np.argmax(values))

    def passes(self, value: float, tolerance: float) -> bool:
        return bool(value >= tolerance) if self.higher_is_better else bool(value <= tolerance)


def signed(s: int, term: str) -> str:
    """``term`` or ``-term`` according to the sign ``s`` (for statements)."""
    return term if s > 0 else f"-{term}"


# ------------------------------------------------------------ kernel helpers
def import_in_background(module: str) -> None:
    """Start importing ``module`` in a daemon thread, unless it is imported already.

    XLA compiles without holding the GIL, so an import started before compilation
    costs the wait nothing; a later ``import`` of the module waits for this one
    (Python's module lock), and a failure here is met again, and reported, there.
    """
    import importlib
    import sys
    import threading

    if module in sys.modules:
        return

    def load():
        try:
            importlib.import_module(module)
        except Exception:  # noqa: BLE001 - the importer that needs it sees the error
            pass

    threading.Thread(target=load, name=f"hamcheck-import-{module}", daemon=True).start()


def abs_matvec(A, v):
    return jnp.abs(A) @ jnp.abs(v)


def over_probes(model, fn, *arrays):
    """Map ``fn`` over the leading axis of the probe arrays (vmap when traced)."""
    if model.traced:
        return jax.vmap(fn)(*arrays)
    rows = [fn(*args) for args in zip(*arrays)]
    return jax.tree_util.tree_map(lambda *r: jnp.stack(r), *rows)


def row_relative(defect, scale):
    """Relative residual of a stack of rows, normalised by the largest scale."""
    return jnp.max(jnp.abs(defect)) / jnp.maximum(jnp.max(jnp.abs(scale)), TINY)


def group_elements(model, rng, n, scale):
    return model.algebra.random_group_elements(rng, n, scale)


def needs_action(what: str):
    """An ``applies`` hook: skip, saying ``what`` the action would be used for, without a finite action."""

    def applies(model, settings):
        if not model.has_action:
            return f"no finite action declared (give action(g, x) to {what})"
        return None

    return applies
