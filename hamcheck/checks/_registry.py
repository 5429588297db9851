"""The checks, in the order they run and are reported. Adding a check is one file and one line here.

>>> from hamcheck.checks._registry import CHECK_NAMES
>>> CHECK_NAMES[:3]
('antisymmetric', 'closed', 'nondegenerate')
"""

from __future__ import annotations

import importlib

from ..errors import UnknownNameError
from ._base import Check

#: The check modules, in the order their checks run and are reported. Each defines ``CHECK``.
MODULES = (
    "antisymmetric",
    "closed",
    "nondegenerate",
    "action",
    "invariant",
    "moment_map",
    "equivariance",
    "group_equivariance",
    "hamiltonian_flow",
)

CHECKS: tuple[Check, ...] = tuple(importlib.import_module(f"{__package__}.{m}").CHECK for m in MODULES)

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
