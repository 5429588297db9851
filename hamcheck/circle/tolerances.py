"""The tolerances of the circle toolkit, each with the reason for its default.

One frozen record, :data:`TOLERANCES`, serves the propagator, the stabilizer
routine, the classification's self-consistency checks, resolution studies and
the cocycle checks of both infinite-dimensional families (Virasoro, loop
groups). Family-specific numbers live in ``hamcheck.virasoro.TOLERANCES`` and
``hamcheck.loop_groups.TOLERANCES``.

>>> from hamcheck.circle import TOLERANCES
>>> TOLERANCES.stabilizer
1e-08
>>> TOLERANCES.replace(stabilizer=1e-9).stabilizer
1e-09
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

__all__ = ["ToleranceRecord", "CircleTolerances", "TOLERANCES"]


class ToleranceRecord:
    """Base of the frozen tolerance records of the circle families: ``replace`` and a compact repr."""

    def replace(self, **changes):
        """A copy with some tolerances changed (unknown names raise TypeError)."""
        return dataclasses.replace(self, **changes)


@dataclass(frozen=True)
class CircleTolerances(ToleranceRecord):
    """Named tolerances of :mod:`hamcheck.circle` (relative unless said otherwise).

    Attributes
    ----------
    trim:
        Fourier coefficients below this times the largest are FFT round-off of
        exact samples (1e-16..1e-15) and are dropped by ``Periodic.trimmed``.
    underresolved_tail:
        Spectral tail (top third of the spectrum over the largest mode) above
        which samples are called under-resolved: resolved analytic data sit at
        1e-15; above 1e-8 spectral results lose digits.
    round_off_floor:
        Residuals below this count as round-off in resolution studies: float64
        identities built from sums of O(M) terms bottom out at 1e-16..1e-14.
    stall_factor:
        A resolution study whose residual falls by less than this factor from
        the coarsest to the finest resolution (while above round-off) stalls:
        a converging spectral method gains orders of magnitude; 0.5 leaves
        room for the pre-asymptotic regime of algebraic decay.
    propagator:
        Default target of the Magnus-6 propagator's error estimate (the change
        between two step counts over 63, relative to ``max(||Y||, 1)``).
        Products of N matrices carry round-off ~ sqrt(N) 1e-16 ~ 1e-14, so
        1e-12 is reachable with margin.
    roundoff_slack:
        When doubling the steps no longer halves the estimate, the rest is
        round-off: the propagator accepts it if within this factor of the
        target (and raises :class:`~hamcheck.ConvergenceError` otherwise).
    error_margin:
        Decisions made on a propagated matrix (class, stabilizer) widen their
        threshold by this multiple of the propagator's error estimate, so they
        are never finer than the matrix is known.
    propagator_trust:
        Self-consistency check of a classification: the propagator's error
        estimate must stay below this. The class is decided at 1e-9 and the
        stabilizer at 1e-8; 1e-10 keeps both decisions clear of the error.
    stabilizer:
        Relative singular value below which a direction counts as stabilizing
        (the one threshold of :func:`hamcheck.circle.kernel`). Exact kernels
        sit at 1e-15 (constants) to 1e-11 (smooth data at the default
        truncation); genuine directions are 1e-3 or larger unless the data are
        within 1e-6 of a degenerate value.
    stabilizer_agreement:
        Largest sine of the principal angles between the two stabilizer bases
        below which they agree: both are known to about the kernel threshold.
    representative_trace:
        The constant representative's closed-form trace against the measured
        trace, relative to ``max(|trace|, 1)``: the class itself is decided at
        1e-9, so a representative on the orbit matches to that.
    cocycle_action, cocycle_antisymmetric, cocycle_central_constant, cocycle_identity:
        The cocycle checks on a user's truncated action. The user's functions
        go through FFTs of size ~4K whose round-off is ~1e-15 log K relative to
        the largest term; 1e-10 leaves a factor 1e4 and is far below real
        mistakes (a sign: 1-2, a factor: 0.1-1).
    cocycle_coboundary:
        Misfit of ``C(X, Y) = lambda([X, Y])`` below which the central term is a
        coboundary: a coboundary fits to 1e-14, Gelfand–Fuchs misfits by O(1)
        (m^3 against m).
    cocycle_ratio:
        The ratio of the central term to the reference is called 1 within this.
    real_values:
        Imaginary parts of a user's coefficient vectors below this (relative)
        are round-off of a complex FFT and dropped.
    """

    trim: float = 1e-14
    underresolved_tail: float = 1e-8
    round_off_floor: float = 1e-13
    stall_factor: float = 0.5
    propagator: float = 1e-12
    roundoff_slack: float = 1e3
    error_margin: float = 1e3
    propagator_trust: float = 1e-10
    stabilizer: float = 1e-8
    stabilizer_agreement: float = 1e-8
    representative_trace: float = 1e-9
    cocycle_action: float = 1e-10
    cocycle_antisymmetric: float = 1e-10
    cocycle_central_constant: float = 1e-10
    cocycle_identity: float = 1e-10
    cocycle_coboundary: float = 1e-8
    cocycle_ratio: float = 1e-8
    real_values: float = 1e-12


TOLERANCES = CircleTolerances()
