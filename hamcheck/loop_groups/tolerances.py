"""The tolerances of :mod:`hamcheck.loop_groups`, each with the reason for its default.

The propagator, stabilizer and cocycle thresholds are shared with the Virasoro
family and live in ``hamcheck.circle.TOLERANCES``.

>>> from hamcheck.loop_groups import TOLERANCES
>>> TOLERANCES.gauge_action
1e-10
"""

from __future__ import annotations

from dataclasses import dataclass

from ..circle.tolerances import ToleranceRecord

__all__ = ["LoopGroupTolerances", "TOLERANCES"]


@dataclass(frozen=True, eq=True)
class LoopGroupTolerances(ToleranceRecord):
    """Tolerances of :mod:`hamcheck.loop_groups`, relative, one field each:

    holonomy:
        Target of the holonomy's error estimate (``circle.propagate``; the
        change between step counts over 63): successive holonomies then agree
        to 6e-13, so identities between two holonomies (gauge covariance,
        checked at 1e-12 in the tests and at ``gauge_action`` here) keep a
        margin. Unitary products reach 1e-16 per step, so 1e-14 is reachable.
    gauge_action:
        Composition ``(gh).A = g.(h.A)`` and holonomy covariance of a user's
        finite action: round-off of the exponentials and of the holonomy
        (1e-13 measured) with a margin of 1000.
    pairing:
        The infinitesimal pairing identity with ``delta`` taken from the
        finite action by a fourth-order central difference at step 1e-3:
        truncation ~1e-12, round-off ~1e-13; 1e-8 leaves a margin of 1e4 and is
        far below a wrong sign (relative residual ~1). The same bound applies
        to the spread of the level ratio fitted from several pairings.
    resonance:
        ``|a/c - n|`` below this (relative to ``max(1, |a/c|)``) puts a chart
        mode n on the degenerate value, where the orbit form vanishes at the
        base point: the chart is built but warns.
    """

    holonomy: float = 1e-14
    gauge_action: float = 1e-10
    pairing: float = 1e-8
    resonance: float = 1e-12


TOLERANCES = LoopGroupTolerances()
