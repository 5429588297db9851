"""Method B: the accessory parameters of q from the monodromy condition.

For the complete metric the developing map sends the boundary circle to a
circle, and in the frame of real boundary solutions (``paths.boundary_frame``)
the monodromy around every cone point is a real matrix (it preserves the image
circle). The accessory parameters ``x`` (see :class:`~.quadratic.AccessoryFamily`)
are found by least squares on the imaginary parts of these monodromies,
computed by continuing ``y'' + q y = 0`` along a ray from the boundary to a small
circle around each cone point and back.

>>> sol = solve_accessory([(0.3, 2.0), (-0.3, 2.0)])
>>> bool(sol.residual < 1e-10)
True
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import least_squares

from ..errors import ConvergenceError
from ._common import Cone, as_cones
from .developing import RootCheck, check_root
from .paths import PROPAGATOR_TOL, Circle, Propagator, Segment, boundary_frame, chain, propagate
from .quadratic import AccessoryFamily, RationalQ

#: Largest imaginary part (relative to the matrix) of a solved monodromy that
#: counts as real: 1e3 x the propagator's tolerance.
REALITY_TOL = 1e-10

#: Continuation stages in the cone angles (from 2 pi, where q = 0). Two close
#: cones (s = 0.02) showed a spurious root from the direct start; 6 stages
#: follow the right branch there.
CONTINUATION = (1 / 6, 2 / 6, 3 / 6, 4 / 6, 5 / 6, 1.0)

#: The second attempt when the first root fails :func:`.developing.check_root`.
FINE_CONTINUATION = tuple(np.arange(1, 25) / 24)


@dataclass(frozen=True)
class Loop:
    """A loop from the boundary point ``w`` around cone ``p``: ray to a circle of radius ``r``."""

    w: complex
    p: complex
    r: float

    @property
    def landing(self) -> complex:
        d = self.w - self.p
        return self.p + self.r * d / abs(d)

    def monodromy(self, q, tol=PROPAGATOR_TOL) -> Propagator:
        """The loop's monodromy in the real boundary frame at ``w``."""
        out = propagate(q, Segment(self.w, self.landing), tol=tol)
        around = propagate(q, Circle(self.p, self.r, math.atan2((self.w - self.p).imag, (self.w - self.p).real)), tol=tol)
        back = Propagator(np.linalg.inv(out.matrix), out.error, out.steps)
        loop = chain(out, around, back)
        G = boundary_frame(self.w)
        M = np.linalg.solve(G, loop.matrix @ G)
        return Propagator(M, loop.error, loop.steps)


def _clearance(a, b, s):
    """Distance from point s to the segment [a, b]."""
    d = b - a
    t = np.clip(((s - a) * np.conj(d)).real / max(abs(d) ** 2, 1e-300), 0.0, 1.0)
    return abs(s - (a + t * d))


def loops(cones, singular_points) -> tuple[Loop, ...]:
    """One loop per cone, its ray chosen to keep the farthest from the other singular points."""
    out = []
    sp = np.asarray(singular_points, complex)
    for c in cones:
        others = sp[np.abs(sp - c.p) > 1e-12]
        r = 0.4 * float(np.min(np.abs(others - c.p))) if others.size else 0.5
        r = min(r, 0.5)
        base = math.atan2(c.p.imag, c.p.real) if abs(c.p) > 1e-12 else 0.0
        best = None
        for dphi in (0.0, 0.3, -0.3, 0.6, -0.6, 1.0, -1.0, 1.5, -1.5, 2.2, -2.2, math.pi):
            w = complex(np.exp(1j * (base + dphi)))
            lp = Loop(w, c.p, r)
            clear = min((_clearance(w, lp.landing, s) - 0.4 * abs(s - c.p) * 0 for s in others), default=np.inf)
            score = clear - 1e-3 * abs(dphi)  # prefer the radial ray when clearances tie
            if best is None or score > best[0]:
                best = (score, lp)
        out.append(best[1])
    return tuple(out)


@dataclass(frozen=True)
class AccessorySolution:
    """Result of method B: accessory parameters ``x``, residues ``b``, the rational ``q``.

    ``residual``: largest relative imaginary part of the cone monodromies (0 for
    the exact solution); ``error``: estimated error of ``b`` (max abs), from the
    residual and the propagators' error through the least-squares Jacobian;
    ``traces``: measured traces of the cone monodromies (exactly ``-2 cos(pi beta)``).
    """

    cones: tuple
    family: AccessoryFamily = field(repr=False)
    x: np.ndarray = field(repr=False)
    b: np.ndarray
    q: RationalQ = field(repr=False)
    residual: float
    error: float
    traces: tuple = ()
    evaluations: int = 0
    seconds: float = 0.0
    root: RootCheck | None = None  # the developing map's half-plane test (None: no free parameter)

    def __repr__(self) -> str:
        return (f"AccessorySolution({len(self.cones)} cones, b={np.round(self.b, 10).tolist()}, "
                f"residual={self.residual:.1e}, error={self.error:.1e})")


def _residual_vector(family, x, lps, tol):
    q = family.q(x)
    res, err, traces = [], 0.0, []
    for lp in lps:
        P = lp.monodromy(q, tol)
        scale = max(np.abs(P.matrix).max(), 1.0)
        res.append(P.matrix.imag.ravel() / scale)
        err = max(err, P.error)
        traces.append(complex(np.trace(P.matrix)))
    return np.concatenate(res) if res else np.zeros(0), err, traces


def _solve(family, x0, tol):
    lps = loops(family.cones, family.q(x0).singular_points)
    count = [0]

    def fun(x):
        count[0] += 1
        return _residual_vector(family, x, lps, tol)[0]

    if family.dim:
        sol = least_squares(fun, x0, method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=200 * (family.dim + 1))
        x, J = sol.x, sol.jac
    else:
        x, J = np.zeros(0), np.zeros((0, 0))
    r, perr, traces = _residual_vector(family, x, lps, tol)
    return x, J, r, perr, traces, count[0]


def _project(family, b):
    """Accessory parameters x whose residues are closest to b."""
    return np.linalg.lstsq(np.vstack([family.N.real, family.N.imag]),
                           np.concatenate([(b - family.b_part).real, (b - family.b_part).imag]), rcond=None)[0]


def _continued(cones, stages, tol):
    """Follow the root from q = 0 at angles 2 pi to the cones' angles through ``stages``."""
    b, nev = None, 0
    for s in stages:
        stage = tuple(Cone(c.p, 2 * np.pi + s * (c.alpha - 2 * np.pi)) for c in cones)
        fam_s = AccessoryFamily.of(stage)
        x, J, r, perr, traces, n = _solve(fam_s, fam_s.guess() if b is None else _project(fam_s, b), tol)
        nev += n
        b = fam_s.residues(x)
    return fam_s, (x, J, r, perr, traces, nev)


def solve_accessory(cones, *, tol: float = PROPAGATOR_TOL, start=None) -> AccessorySolution:
    """Method B for cone points ``[(p, alpha), ...]`` with angles below 2 pi.

    The monodromy condition has several roots (spurious ones give real
    monodromy but a developing map that leaves the disk's image); the right one
    is followed by continuation in the angles from 2 pi, where q = 0 and the
    root is the trivial one (stages :data:`CONTINUATION`). ``start``: residues
    of a nearby configuration (e.g. a neighbouring chart cell) to start from
    instead, skipping the continuation. Every root is tested directly
    (:func:`.developing.check_root`: the developing map must keep one
    half-plane); a spurious root, or none, sends the solver on to continuation,
    then to :data:`FINE_CONTINUATION`, and a ConvergenceError if that fails too.
    """
    t0 = time.perf_counter()
    cones = as_cones(cones, below_two_pi=True)
    family = AccessoryFamily.of(cones)
    nev, root = 0, None
    if not family.dim:  # no free parameter: q is determined, there is no other root
        x, J, r, perr, traces, nev = _solve(family, np.zeros(0), tol)
    else:
        # each attempt gives (family, solve result); a continuation's family is its last stage's (angles equal
        # to the cones' up to rounding, and x is in its basis)
        attempts = [lambda: _continued(cones, CONTINUATION, tol), lambda: _continued(cones, FINE_CONTINUATION, tol)]
        if start is not None:
            attempts.insert(0, lambda: (family, _solve(family, _project(family, np.asarray(start, complex)), tol)))
        for attempt in attempts:
            family, (x, J, r, perr, traces, n) = attempt()
            nev += n
            if float(np.abs(r).max(initial=0.0)) <= 1e3 * REALITY_TOL:  # real monodromy: is it the metric's root?
                root = check_root(family.q(x), cones, tol=tol)
                if root.hyperbolic:
                    break
    resid = float(np.abs(r).max(initial=0.0))
    if resid > 1e3 * REALITY_TOL:
        raise ConvergenceError(
            f"method B found no accessory parameters with real monodromy for {list(cones)} "
            f"(best imaginary part {resid:.1e}); the cone points may be too close to each other or to the boundary"
        )
    if root is not None and not root.hyperbolic:
        z = root.wrong_sign[0]
        raise ConvergenceError(
            f"method B reached only spurious roots for {list(cones)}: real monodromy, but the developing map leaves "
            f"its half-plane (Im(y1 conj y2) changes sign at {len(root.wrong_sign)} of {root.points} probe points, "
            f"e.g. z = {z.real:.4f}{z.imag:+.4f}i), even with {len(FINE_CONTINUATION)} continuation stages; "
            "method A (solve_liouville) does not have this ambiguity"
        )
    # error of x: the least-squares Jacobian turns residual and propagator error into a parameter error
    if family.dim:
        Jp = np.linalg.pinv(J)
        ex = np.abs(Jp).sum(axis=1) * (resid + 10 * perr)
        eb = float(np.abs(family.N).max() * ex.sum())
    else:
        eb = 0.0
    return AccessorySolution(cones, family, x, family.residues(x), family.q(x), resid, eb, tuple(traces), nev,
                             time.perf_counter() - t0, root)
