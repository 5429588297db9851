"""The checks, in the order they run and are reported. Adding a check is one file and one line here.

>>> from hamcheck.checks._registry import CHECK_NAMES
>>> CHECK_NAMES[:3]
('antisymmetric', 'closed', 'nondegenerate')
"""

from __future__ import annotations

from ..errors import UnknownNameError
from . import (
    action,
    antisymmetric,
    closed,
    equivariance,
    group_equivariance,
    hamiltonian_flow,
    invariant,
    moment_map,
    nondegenerate,
)
from ._base import Check

CHECKS: tuple[Check, ...] = (
    antisymmetric.CHECK,
    closed.CHECK,
    nondegenerate.CHECK,
    action.CHECK,
    invariant.CHECK,
    moment_map.CHECK,
    equivariance.CHECK,
    group_equivariance.CHECK,
    hamiltonian_flow.CHECK,
)

CHECK_NAMES: tuple[str, ...] = tuple(c.name for c in CHECKS)

#: Findings of the runner itself: a user function non-finite or raising at some points.
POINT_FAULT_KINDS = ("non-finite", "raised")

#: Every kind of finding hamcheck reports: those of the checks' diagnoses, then the point faults.
FINDING_KINDS: tuple[str, ...] = tuple(k for c in CHECKS for k in c.finding_kinds) + POINT_FAULT_KINDS


def registered() -> tuple[Check, ...]:
    """The checks the runner uses, read at call time (a test may register one more)."""
    return CHECKS


def check_named(name: str) -> Check:
    """The registered check called ``name``; :class:`hamcheck.errors.UnknownNameError` otherwise."""
    for c in registered():
        if c.name == name:
            return c
    raise UnknownNameError(f"unknown check {name!r}; expected one of {[c.name for c in registered()]}")
