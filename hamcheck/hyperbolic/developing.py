"""The developing map of a rational q, the metric it defines, and whether a root of method B is the metric's.

Two solutions ``y1, y2`` of ``y'' + q y = 0`` with real boundary data at a
boundary point ``w`` (``paths.boundary_frame``) give the developing map
``D = y1 / y2``, real on the boundary circle. If q is the quadratic
differential of a hyperbolic metric, D sends the whole disk into one half-plane
and the metric is its pull-back ``|D'|^2 / (Im D)^2 |dz|^2``; with ``W`` the
Wronskian (here ``|W| = 1``) that is ``e^u = |W| / |Im(y1 conj y2)|``
(from memory: the upper half-plane metric ``|dD| / Im D`` and ``D' = -W / y2^2``).

Method B's monodromy condition (real monodromy in that frame) has spurious
roots besides the metric's: their D is still real on the boundary but does not
keep one half-plane, so ``Im(y1 conj y2)`` changes sign inside the disk.
:func:`check_root` samples it over the disk, on rings around each cone and
between the cones; one sign everywhere is what a hyperbolic metric requires
(the converse needs every point, so a pass is evidence, not proof).

>>> from hamcheck.hyperbolic import solve_accessory
>>> check_root(solve_accessory([(0.3, 2.0), (-0.3, 2.0)]).q, [(0.3, 2.0), (-0.3, 2.0)]).hyperbolic
True
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np

from ._common import as_cones
from .paths import PROPAGATOR_TOL, Segment, boundary_frame, propagate

__all__ = ["RootCheck", "check_root", "developing_u", "probe_points"]

#: Boundary points tried as the start of the segment to a point (the clearest wins).
STARTS = 64

#: A sign counts when |Im(y1 conj y2)| exceeds this many times its propagation error.
SIGN_MARGIN = 1e3


def _clearance(w, z, cones) -> float:
    """Smallest distance from the segment [w, z] to a cone other than one at z."""
    t = np.linspace(0.0, 1.0, 65)
    seg = w + t * (z - w)
    others = [c.p for c in cones if abs(c.p - z) > 1e-12]
    return min((float(np.abs(seg - p).min()) for p in others), default=np.inf)


def _frame(q, z, cones, tol):
    """``(y, y')`` of the two real-boundary solutions at ``z``, reached by the clearest boundary segment."""
    ws = np.exp(2j * np.pi * (np.arange(STARTS) + 0.5) / STARTS)
    w = max(ws, key=lambda w: _clearance(w, z, cones))
    P = propagate(q, Segment(complex(w), complex(z)), tol=tol)
    Y = P.matrix @ boundary_frame(complex(w))
    return Y, P.error * max(np.abs(P.matrix).max(), 1.0) ** 2


def _im(q, z, cones, tol):
    Y, err = _frame(q, z, cones, tol)
    return float((Y[0, 0] * np.conj(Y[0, 1])).imag), float(err)


def developing_u(q, cones, z, *, tol: float = PROPAGATOR_TOL) -> np.ndarray:
    """``u = -log|Im(y1 conj y2)|`` at the points ``z``: the metric the developing map of q defines.

    For q of a hyperbolic metric this is its ``u`` (for the closed-form cone disk to ~1e-13).
    """
    cones = as_cones(cones)
    return np.array([-np.log(abs(_im(q, complex(p), cones, tol)[0])) for p in np.atleast_1d(z)])


def probe_points(cones, per_ring: int = 8) -> np.ndarray:
    """Points over the disk (radii 0.2 .. 0.9), on two rings around each cone, and between pairs of cones."""
    cones = as_cones(cones)
    th = 2 * np.pi * (np.arange(per_ring) + 0.25) / per_ring
    pts = [r * np.exp(1j * (th + 0.3 * k)) for k, r in enumerate((0.2, 0.5, 0.75, 0.9))]
    ps = np.array([c.p for c in cones])
    for i, c in enumerate(cones):
        others = np.delete(ps, i)
        d = min(1 - abs(c.p), float(np.abs(others - c.p).min()) if others.size else 1.0)
        for f in (0.3, 0.6):
            pts.append(c.p + f * d * np.exp(1j * th))
        for p in others:
            pts.append(np.array([(c.p + p) / 2]))
    z = np.concatenate(pts)
    return z[np.abs(z) < 0.97]


@dataclass(frozen=True)
class RootCheck:
    """The sign of ``Im(y1 conj y2)`` at the probe points: one sign is the hyperbolic root."""

    hyperbolic: bool
    points: int
    wrong_sign: tuple  # points whose sign differs from the majority's
    undetermined: int  # points where |Im| is within SIGN_MARGIN x its error
    seconds: float

    def __repr__(self) -> str:
        verdict = "one half-plane" if self.hyperbolic else f"sign changes at {len(self.wrong_sign)} points"
        return f"RootCheck({verdict}, {self.points} points)"


def check_root(q, cones, *, points=None, tol: float = PROPAGATOR_TOL) -> RootCheck:
    """Does the developing map of ``q`` keep one half-plane at the probe points (:func:`probe_points`)?"""
    t0 = time.perf_counter()
    cones = as_cones(cones)
    z = probe_points(cones) if points is None else np.atleast_1d(np.asarray(points, complex))
    vals = np.array([_im(q, complex(p), cones, tol) for p in z])
    s, err = vals[:, 0], vals[:, 1]
    sure = np.abs(s) > SIGN_MARGIN * err
    signs = np.sign(s[sure])
    major = 1.0 if (signs > 0).sum() >= (signs < 0).sum() else -1.0
    wrong = tuple(complex(p) for p in z[sure][signs != major])
    return RootCheck(not wrong, len(z), wrong, int((~sure).sum()), time.perf_counter() - t0)
