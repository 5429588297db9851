"""The tolerances of :mod:`hamcheck.virasoro`, each with the reason for its default.

The propagator, stabilizer and cocycle thresholds are shared with the loop
groups and live in ``hamcheck.circle.TOLERANCES``.

>>> from hamcheck.virasoro import TOLERANCES
>>> TOLERANCES.monodromy, TOLERANCES.base_form
(1e-12, 1e-12)
"""

from __future__ import annotations

from dataclasses import dataclass

from ..circle.tolerances import ToleranceRecord

__all__ = ["VirasoroTolerances", "TOLERANCES"]


@dataclass(frozen=True)
class VirasoroTolerances(ToleranceRecord):
    """Named tolerances of the Virasoro family (relative).

    Attributes
    ----------
    monodromy:
        Target of the monodromy's error estimate (``circle.propagate``):
        products of N 2x2 matrices carry round-off ~ sqrt(N) 1e-16 ~ 1e-14, so
        1e-12 is reachable with margin.
    trace_class:
        ``|trace -+ 2|`` below this (relative to ``max(||M||, 1)``, plus
        ``circle.TOLERANCES.error_margin`` times the monodromy's error) counts
        as parabolic or +-identity: 1e3 above the monodromy's target, so the
        class is decided no finer than the monodromy is known.
    base_form:
        The chart's form at the base point against the closed mode formula:
        both are exact up to the quadrature's round-off (measured 4e-16 to
        6e-16); a wrong coefficient gives O(1).
    resonance:
        ``|T0 - c n^2/4|`` below this (relative) puts a chart mode on the
        degenerate value, where the orbit form vanishes at the base point: the
        chart is built but warns. Values within 1e-9 give forms whose smallest
        singular value is below the nondegeneracy tolerance.
    region_pfaffian:
        The sampled region of :func:`~hamcheck.virasoro.orbit_model` ends where,
        along any scanned ray, the Pfaffian of the form falls to this fraction of
        its value at the base point (or changes sign): the pulled-back form of a
        finite slice can degenerate (a Pfaffian crossing zero) inside the chart.
    region_safety:
        The sampled radius is this fraction of the first such radius, so the
        points between scanned rays keep a margin to the degenerate set.
    """

    monodromy: float = 1e-12
    trace_class: float = 1e-9
    base_form: float = 1e-12
    resonance: float = 1e-9
    region_pfaffian: float = 0.1
    region_safety: float = 0.5


TOLERANCES = VirasoroTolerances()
