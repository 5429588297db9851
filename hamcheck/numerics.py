"""Tolerances and relative residuals.

Every tolerance hamcheck uses is a field of :class:`Tolerances`, with the reason
for its default. The defaults of the checks' tolerances (and their widened
finite-difference values) live beside each check in :mod:`hamcheck.checks`;
this module collects them, adds the tolerances the diagnoses and the algebra
builders share, and builds the class from that list. Residuals are *relative*:
a defect divided by a bound on the absolute values of the terms that make it up
(never by the signed sum, whose terms cancel and would fake a floor). Autodiff
residuals of true identities sit at 1e-17 to 3e-16 on this kind of machine up
to dim 512; the defaults are 1e-12, at least 500x above every measured floor
and far below any real mistake (a wrong sign gives 1 to 2, a wrong factor 0.3
to 1).

Example
-------
>>> from hamcheck.numerics import TOLERANCES
>>> TOLERANCES.moment_map
1e-12
>>> TOLERANCES.replace(moment_map=1e-10).moment_map
1e-10
>>> Tolerances.reasons["fit"][:40]
'relative misfit below which a diagnosis '
"""

from __future__ import annotations

import dataclasses
from types import MappingProxyType

from .checks import CHECKS
from .checks._base import TINY, Tolerance

__all__ = ["Tolerances", "TOLERANCES", "FINITE_DIFFERENCE_TOLERANCES", "relative"]

#: Tolerances that belong to no single check.
SHARED = (
    (
        "fit",
        Tolerance(
            1e-6,
            "relative misfit below which a diagnosis (sign, scale, offset, constant cocycle) is accepted: fits "
            "pool many points and their misfit of an exact relation is ~1e-14; a wrong diagnosis misfits by O(1)",
            1e-4,
            "the pooled data carry the differences' error",
        ),
    ),
    ("basis", Tolerance(1e-10, "linear independence and closure of a matrix basis (relative)")),
)


def _specs():
    for c in CHECKS:
        yield c.name, c.tolerance
        yield from c.extra_tolerances
    yield from SHARED


_SPECS = dict(_specs())


def _docstring() -> str:
    lines = [
        "Named tolerances, each a relative residual unless said otherwise (built from the check modules).",
        "",
        "Attributes",
        "----------",
    ]
    for name, spec in _SPECS.items():
        lines.append(f"{name}: default {spec.default:g}: {spec.reason}.")
        if spec.finite_differences is not None:
            lines.append(f"    With finite differences {spec.finite_differences:g}: {spec.finite_differences_reason}.")
    return "\n".join(lines)


def _replace(self, **changes) -> "Tolerances":
    """A copy with some tolerances changed (unknown names raise TypeError)."""
    return dataclasses.replace(self, **changes)


def _for_check(self, name: str) -> float:
    return getattr(self, name)


Tolerances = dataclasses.make_dataclass(
    "Tolerances",
    [(name, float, dataclasses.field(default=spec.default)) for name, spec in _SPECS.items()],
    frozen=True,
    namespace={
        "__doc__": _docstring(),
        "replace": _replace,
        "for_check": _for_check,
        # kept for the algebra builders, which run before any model exists
        "basis_rtol": property(lambda self: self.basis),
        "reasons": MappingProxyType({name: spec.reason for name, spec in _SPECS.items()}),
    },
)
Tolerances.__module__ = __name__

TOLERANCES = Tolerances()

#: Tolerances used when a model opts into finite differences (each check's widened value and its reason
#: beside the check). The report marks every result computed this way.
FINITE_DIFFERENCE_TOLERANCES = Tolerances(**{name: spec.for_derivatives(traced=False) for name, spec in _SPECS.items()})


def relative(defect, scale, floor=0.0):
    """``max|defect| / max(max|scale|, floor, tiny)`` with jax or numpy arrays.

    ``scale`` must bound the absolute values of the terms whose signed sum is
    ``defect``; ``floor`` guards against dividing round-off by round-off.
    """
    from ._jax import jnp

    num = jnp.max(jnp.abs(defect))
    den = jnp.maximum(jnp.maximum(jnp.max(jnp.abs(scale)), floor), TINY)
    return num / den
