"""The axioms, one module each, and the registry that lists them.

Every check module (``antisymmetric``, ``closed``, ``nondegenerate``, ``action``,
``invariant``, ``moment_map``, ``equivariance``, ``group_equivariance`` and
``hamiltonian_flow`` for the check named ``flow``) holds everything about its
check: kernel, probes, ``applies``, its statement in the model's convention,
its tolerance with the reason, its diagnosis and which way it compares, all in
one frozen :class:`Check` record named ``CHECK``. :mod:`._registry` lists
them in order; :mod:`.run` runs them without knowing any by name.

Conventions (see :class:`hamcheck.Convention`): ``X_a`` are the fundamental
vector fields including the ``flow`` sign; ``s = sign * flow``.

>>> from hamcheck.checks import CHECKS
>>> print(CHECKS[5].state((1, 1))[:64])
the moment equation, with sign = +1: X_a^i omega_ij = d_j mu_a f
"""

from __future__ import annotations

from ._base import Check, Tolerance
from ._registry import CHECK_NAMES, CHECKS, FINDING_KINDS, check_named

__all__ = ["Check", "Tolerance", "CHECKS", "CHECK_NAMES", "FINDING_KINDS", "check_named"]
