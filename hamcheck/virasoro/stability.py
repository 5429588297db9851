"""Stability charts of Hill potentials: the orbit class of ``(T, c)`` over a parameter plane.

``stability_chart(potential, a_values, b_values, c=...)`` classifies the Hill
operator ``c d^2/dtheta^2 + T`` for ``T = potential(a, b)`` at every grid
point, with the class names of :func:`hamcheck.virasoro.classify`, the trace
and the rotation number of the monodromy over the circle ``R/2piZ``.

How the monodromies are computed, and why
-----------------------------------------
All grid points are integrated at once (numpy arrays over points): the same
sixth-order Magnus scheme as :mod:`hamcheck.virasoro`, written out entry by
entry for ``Y' = [[0, 1], [-T/c, 0]] Y`` (the exponent of a step is traceless
and its exponential is closed-form), with step doubling per point until the
change / 63 is below :data:`CHART_TOL` relative to ``||M||``. A class is taken
by classify's rule (``|tr -+ 2|`` against ``TOLERANCES.trace_class`` plus 1e3 x the error
estimate); a point whose integration did not converge and whose error bound
reaches ``+-2`` is ``"undetermined"``, never given a class it may not have.

The rotation number needs the winding of solutions, not only the monodromy:
the Prüfer angles of the two columns of the fundamental matrix are followed
step by step on the second level (steps well resolved), and the exact end
angles, read off the converged monodromy, are lifted to the nearest branch.
Any other solution's angle stays between those two (angles of solutions of the
first-order Prüfer equation never cross, and ``phi + pi`` is a solution too),
which pins the winding of an eigen-direction exactly.

Example
-------
>>> import numpy as np
>>> from hamcheck.virasoro.stability import stability_chart
>>> chart = stability_chart(lambda a, q: (lambda th: a - 2 * q * np.cos(2 * th)),
...                         np.linspace(0.2, 0.8, 3), [0.0, 0.1])
>>> chart.classes.shape, str(chart.classes[0, 0])
((2, 3), 'elliptic')
"""

from __future__ import annotations

import inspect
import json
import math
import time
from dataclasses import dataclass, field

import numpy as np

from .. import circle
from ..errors import UsageError
from .tolerances import TOLERANCES

__all__ = [
    "CHART_CLASSES",
    "CHART_TOL",
    "MIN_TASK_SECONDS",
    "StabilityChart",
    "load_potential_family",
    "stability_chart",
]

#: Target error of each monodromy relative to its norm: classify's ``TOLERANCES.monodromy``
#: (sixth order, products of N 2x2 matrices carry round-off ~sqrt(N) 1e-16).
CHART_TOL = TOLERANCES.monodromy

#: The classes of :func:`hamcheck.virasoro.classify`, then ``undetermined`` (the
#: integration did not converge and its error bound reaches trace +-2).
CHART_CLASSES = ("elliptic", "hyperbolic", "parabolic+", "parabolic-", "+identity", "-identity", "undetermined")

#: Words for the legend of :meth:`StabilityChart.plot`.
CLASS_WORDS = {
    "elliptic": "elliptic: |trace| < 2, solutions bounded",
    "hyperbolic": "hyperbolic: |trace| > 2, solutions grow",
    "parabolic+": "parabolic, trace +2",
    "parabolic-": "parabolic, trace -2",
    "+identity": "monodromy +identity",
    "-identity": "monodromy -identity",
    "undetermined": "undetermined: integration not converged",
}
_COLORS = {
    "elliptic": "#9ecae1", "hyperbolic": "#fdae6b", "parabolic+": "#31a354", "parabolic-": "#756bb1",
    "+identity": "#006d2c", "-identity": "#3f007d", "undetermined": "#bdbdbd",
}

#: Each Dask task gets at least this much work (the issue: >= 1 s per task, so
#: scheduling overhead of ~1 ms per task stays negligible).
MIN_TASK_SECONDS = 1.0

#: Samples taken from a callable potential: as classify does with callables.
CALLABLE_SAMPLES = 1024

#: Points x steps held in memory at once (4 matrix entries of float64 each: 64 MiB).
_BLOCK = 2**21

#: Finest step count before a point is given up as unconverged.
MAX_STEPS = 2**16

#: Error estimates above this are outside the asymptotic regime of step doubling:
#: such a point gets no class near +-2 at all.
_UNRELIABLE = 1e-3

_SQ15 = math.sqrt(15.0)
_CH = tuple(1.0 / math.factorial(2 * k) for k in range(11))  # cosh(sqrt x) = sum x^k / (2k)!
_SH = tuple(1.0 / math.factorial(2 * k + 1) for k in range(11))  # sinh(sqrt x)/sqrt x
_NODES = (0.5 - _SQ15 / 10, 0.5, 0.5 + _SQ15 / 10)  # Gauss-Legendre nodes on [0, 1]


# ------------------------------------------------------------- potentials
def _samples_or_modes(value, where: str):
    """One potential as ``("samples", array)`` (callables are sampled as classify does) or ``("modes", (a0, a, b))``."""
    if isinstance(value, circle.Periodic):
        if value.value_shape != () or not value.real:
            raise UsageError(f"{where}: T must be real and scalar-valued; got a Periodic of shape {value.value_shape}")
        if not np.all(np.isfinite(value.coefficients)):
            raise UsageError(f"{where}: T has NaN or inf coefficients; expected finite values")
        return "modes", value.trimmed().real_coefficients()
    if callable(value):
        try:
            arr = np.asarray(value(circle.grid(CALLABLE_SAMPLES)))
        except Exception as exc:
            raise UsageError(f"{where}: calling T(theta) on a numpy array raised {type(exc).__name__}: {exc}") from None
        if arr.shape != (CALLABLE_SAMPLES,):
            raise UsageError(f"{where}: T(theta) on {CALLABLE_SAMPLES} points returned shape {arr.shape}; expected ({CALLABLE_SAMPLES},)")
    else:
        arr = np.asarray(value)
        if arr.ndim == 0:
            arr = arr.reshape(1)
    if np.iscomplexobj(arr) or not np.issubdtype(arr.dtype, np.number):
        raise UsageError(f"{where}: T must be real numbers; got dtype {arr.dtype}")
    if arr.ndim != 1:
        raise UsageError(f"{where}: T must be a number, 1-d samples, a callable of theta or a Periodic; got shape {arr.shape}")
    if not np.all(np.isfinite(arr)):
        raise UsageError(f"{where}: T is NaN or inf somewhere; expected finite values")
    return "samples", arr.astype(float)


def _modes_of_samples(F):
    """Real Fourier coefficients of rows of samples on the uniform grid (the interpolant of
    :meth:`hamcheck.circle.Periodic.from_samples`, Nyquist split evenly), as ``(a0, A, B)``."""
    M = F.shape[1]
    fh = np.fft.rfft(F, axis=1) / M
    A, B = 2 * fh[:, 1:].real, -2 * fh[:, 1:].imag
    if M % 2 == 0 and M > 1:
        A[:, -1], B[:, -1] = fh[:, -1].real, 0.0
    return fh[:, 0].real, A, B


def _sample_potentials(potential, pairs):
    """Fourier coefficients of ``potential(a, b)`` at each pair, padded to a common degree.

    Coefficients below 1e-14 of a row's largest are dropped (FFT round-off of
    exact samples; :meth:`hamcheck.circle.Periodic.trimmed`'s rule), so the
    degree, which sets the step counts, is that of the potential.
    """
    kinds = []
    for a, b in pairs:
        where = f"potential({a!r}, {b!r})"
        try:
            T = potential(a, b)
        except Exception as exc:
            raise UsageError(f"{where} raised {type(exc).__name__}: {exc}") from None
        kinds.append(_samples_or_modes(T, where))
    P = len(pairs)
    a0, A, B = np.zeros(P), [None] * P, [None] * P
    by_length = {}
    for i, (kind, v) in enumerate(kinds):
        if kind == "modes":
            a0[i], A[i], B[i] = v
        else:
            by_length.setdefault(len(v), []).append(i)
    for idx in by_length.values():
        g0, gA, gB = _modes_of_samples(np.stack([kinds[i][1] for i in idx]))
        a0[idx] = g0
        for j, i in enumerate(idx):
            A[i], B[i] = gA[j], gB[j]
    Dmax = max((len(r) for r in A), default=0)
    Af, Bf = np.zeros((P, Dmax)), np.zeros((P, Dmax))
    for i in range(P):
        Af[i, : len(A[i])], Bf[i, : len(B[i])] = A[i], B[i]
    mag = np.hypot(Af, Bf) / 2  # |complex coefficient| of modes +-n
    top = np.maximum(np.abs(a0), mag.max(axis=1, initial=0.0))
    keep = mag > 1e-14 * np.maximum(top, np.finfo(float).tiny)[:, None]
    D = int(np.max(np.where(keep, np.arange(1, Dmax + 1), 0), initial=0))
    A, B = np.where(keep, Af, 0.0)[:, :D], np.where(keep, Bf, 0.0)[:, :D]
    return a0, A, B


# ------------------------------------------------------- batched monodromy
def _q_nodes(a0, A, B, c, N):
    """``T/c`` at the three Gauss nodes of each of N steps: three arrays (P, N)."""
    h = 2 * np.pi / N
    n = np.arange(1, A.shape[1] + 1)
    AB = np.concatenate([A, B], axis=1) / c  # one product per node: [A | B] @ [cos; sin]
    out = []
    for nd in _NODES:
        ph = np.outer(n, (np.arange(N) + nd) * h)
        q = AB @ np.concatenate([np.cos(ph), np.sin(ph)]) if n.size else np.zeros((len(a0), N))
        q += (a0 / c)[:, None]
        out.append(q)
    return out


def _steps(a0, A, B, c, N):
    """Sixth-order Magnus step exponentials as entries ``(e00, e01, e10, e11)``, each (P, N).

    The three-point Gauss scheme (Blanes, Casas, Oteo, Ros, Phys. Rep. 470 (2009),
    from memory), with the nested commutators of ``A = [[0, 1], [-q, 0]]``
    multiplied out (d1 = q3 - q1, d2 = q3 - 2 q2 + q1, derived with sympy).
    """
    h = 2 * np.pi / N
    q1, q2, q3 = _q_nodes(a0, A, B, c, N)
    d1, d2 = q3 - q1, q3 - 2 * q2 + q1
    w11 = _SQ15 * d1 * h**2 / 36 + _SQ15 * d1 * (d2 + 12 * q2) * h**4 / 6480
    w12 = h + d2 * h**3 / 54 + d1**2 * h**5 / 2160
    w21 = -h * (q2 + 5 * d2 / 18) + h**3 * (d2**2 / 324 - d1**2 / 72 + d2 * q2 / 54) - d1**2 * q2 * h**5 / 2160
    # exp of a traceless W: cosh(s) I + sinh(s)/s W with s^2 = -det W. Resolved steps have
    # |s^2| ~ h^2 |q| <= 0.62, where 11 Taylor terms are exact to round-off (1/22! ~ 1e-21);
    # the rare larger ones take the closed form.
    s2 = w11**2 + w12 * w21
    ch, sh = np.full_like(s2, _CH[-1]), np.full_like(s2, _SH[-1])
    for ck, sk in zip(_CH[-2::-1], _SH[-2::-1]):  # Horner, in place
        ch *= s2
        ch += ck
        sh *= s2
        sh += sk
    big = np.abs(s2) > 1.0
    if big.any():
        z = np.sqrt(s2[big].astype(complex))
        ch[big], sh[big] = np.cosh(z).real, (np.sinh(z) / z).real
    return ch + sh * w11, sh * w12, sh * w21, ch - sh * w11


def _tree_product(E):
    """``E[N-1] ... E[0]`` along axis 1 by pairwise products (N a power of two)."""
    e00, e01, e10, e11 = E
    while e00.shape[1] > 1:
        # later (odd) steps multiply from the left
        l00, l01, l10, l11 = e00[:, 1::2], e01[:, 1::2], e10[:, 1::2], e11[:, 1::2]
        r00, r01, r10, r11 = e00[:, 0::2], e01[:, 0::2], e10[:, 0::2], e11[:, 0::2]
        e00, e01 = l00 * r00 + l01 * r10, l00 * r01 + l01 * r11
        e10, e11 = l10 * r00 + l11 * r10, l10 * r01 + l11 * r11
    return np.stack([np.stack([e00[:, 0], e01[:, 0]], -1), np.stack([e10[:, 0], e11[:, 0]], -1)], -2)


def _walk(E):
    """Product of the steps one at a time, and the unwrapped Prüfer angles ``atan2(psi, psi')``
    gained by the two columns (solutions with ``(psi, psi')(0) = (1, 0)`` and ``(0, 1)``)."""
    e00, e01, e10, e11 = E
    P = e00.shape[0]
    Y = np.broadcast_to(np.eye(2), (P, 2, 2)).copy()
    wind = np.zeros((P, 2))
    for j in range(e00.shape[1]):
        y0, y1 = Y[:, 0, :], Y[:, 1, :]  # rows: psi and psi' of both columns
        n0 = e00[:, j, None] * y0 + e01[:, j, None] * y1
        n1 = e10[:, j, None] * y0 + e11[:, j, None] * y1
        # angle of (psi', psi) turned in this step, in (-pi, pi]: steps are resolved (|h sqrt q| < pi/4)
        wind += np.arctan2(y1 * n0 - y0 * n1, y1 * n1 + y0 * n0)
        Y[:, 0, :], Y[:, 1, :] = n0, n1
    return Y, wind


def _start_steps(a0, A, B, c, min_steps):
    """Smallest power-of-two step count per point resolving its modes and ``sqrt(max |T/c|)``
    (the rule of :func:`hamcheck.virasoro.monodromy`)."""
    qmax = (np.abs(a0) + np.hypot(A, B).sum(axis=1)) / abs(c)
    deg = np.max(np.where((A != 0) | (B != 0), np.arange(1, A.shape[1] + 1), 0), axis=1, initial=0)
    need = np.maximum(4 * deg, 8 * np.sqrt(qmax) + 16)
    return np.maximum(min_steps, 2 ** np.ceil(np.log2(np.maximum(need, 1)))).astype(np.int64)


def _monodromies(a0, A, B, c, *, tol=CHART_TOL, min_steps=64, max_steps=MAX_STEPS):
    """Monodromy, error estimate, steps, convergence flag and exact windings for every point."""
    P = len(a0)
    M = np.zeros((P, 2, 2))
    err = np.full(P, np.inf)
    steps = np.zeros(P, dtype=np.int64)
    wind = np.zeros((P, 2))
    converged = np.zeros(P, dtype=bool)
    N0 = _start_steps(a0, A, B, c, min_steps)
    for start in np.unique(N0):
        group = np.flatnonzero(N0 == start)
        block = max(1, _BLOCK // (8 * int(start)))
        for lo in range(0, len(group), block):
            idx = group[lo : lo + block]
            _refine(idx, a0, A, B, c, int(start), tol, max_steps, M, err, steps, wind, converged)
    return M, err, steps, wind, converged


def _refine(idx, a0, A, B, c, N, tol, max_steps, M, err, steps, wind, converged):
    """Step doubling for the points ``idx`` (same start), writing into the output arrays."""
    prev = _tree_product(_steps(a0[idx], A[idx], B[idx], c, N))
    N *= 2
    cur, coarse = _walk(_steps(a0[idx], A[idx], B[idx], c, N))
    best = np.full(len(idx), np.inf)
    active = np.arange(len(idx))
    while True:
        scale = np.maximum(np.abs(cur).max(axis=(1, 2)), 1.0)
        e = np.abs(cur - prev).max(axis=(1, 2)) / scale / 63.0
        # converged, or stalled at the round-off floor just above tol (as virasoro.monodromy)
        done = (e <= tol) | ((e >= 0.5 * best) & (best < 1e3 * tol))
        last = 2 * N > max_steps
        fin = done | last
        out = idx[active[fin]]
        M[out], err[out], steps[out] = cur[fin], np.maximum(e[fin], 1e-16), N
        converged[out] = done[fin]
        wind[out] = _lift(cur[fin], coarse[active[fin]])
        keep = ~fin
        if not keep.any():
            return
        best = np.minimum(best, e)[keep]
        active, prev, N = active[keep], cur[keep], 2 * N
        cur = _tree_product(_steps(a0[idx[active]], A[idx[active]], B[idx[active]], c, N))


def _lift(M, coarse):
    """Exact Prüfer windings of the two columns: the end angles read off M, on the branch
    nearest the step-by-step estimate (whose error is far below pi)."""
    start = np.array([np.pi / 2, 0.0])  # atan2(psi, psi') of (1, 0) and (0, 1)
    end = np.arctan2(M[:, 0, :], M[:, 1, :]) - start
    return end + 2 * np.pi * np.round((coarse - end) / (2 * np.pi))


# ------------------------------------------------------------- invariants
def _classes(M, err, converged):
    """Class names by :func:`hamcheck.virasoro.classify`'s rule; ``undetermined`` where the
    integration did not converge and its error bound reaches trace +-2."""
    t = M[:, 0, 0] + M[:, 1, 1]
    scale = np.maximum(np.abs(M).max(axis=(1, 2)), 1.0)
    tol = TOLERANCES.trace_class * scale + 1e3 * err * scale
    out = np.where(np.abs(t) < 2, "elliptic", "hyperbolic").astype(object)
    for s, name in ((-1, "-"), (1, "+")):
        near = np.abs(t - 2 * s) <= tol
        ident = np.abs(M - s * np.eye(2)).max(axis=(1, 2)) <= tol
        out[near & ident] = f"{name}identity"
        out[near & ~ident] = f"parabolic{name}"
    unsure = ~converged & ((np.abs(np.abs(t) - 2) <= tol) | (err > _UNRELIABLE))
    out[unsure] = "undetermined"
    return out, t


def _rotation_numbers(M, t, wind, classes):
    """Rotation numbers as :func:`hamcheck.virasoro.rotation_number` defines them."""
    P = len(t)
    rho = np.full(P, np.nan)
    ell = classes == "elliptic"
    # elliptic: 2 pi rho = alpha + 2 pi floor(winding of the first column / 2 pi)
    alpha = np.arccos(np.clip(t / 2, -1.0, 1.0))
    alpha = np.where(np.sign(-M[:, 1, 0]) < 0, 2 * np.pi - alpha, alpha)
    rho[ell] = (alpha[ell] + 2 * np.pi * np.floor(wind[ell, 0] / (2 * np.pi))) / (2 * np.pi)
    ident = np.isin(classes, ["+identity", "-identity"])
    rho[ident] = np.round(wind[ident, 0] / np.pi) / 2
    rest = np.flatnonzero(~ell & ~ident & (classes != "undetermined"))
    if rest.size:
        w, V = np.linalg.eig(M[rest])
        v = np.real(V[np.arange(rest.size), :, np.argmax(np.abs(w), axis=1)])
        phi0 = np.mod(np.arctan2(v[:, 0], v[:, 1]), np.pi)  # the ray's angle in [0, pi)
        v = np.stack([np.sin(phi0), np.cos(phi0)], -1)
        # the eigen-solution's angle stays between those of the columns (or of column 1 and column 2 + pi)
        e1 = np.pi / 2 + wind[rest, 0]
        e2 = wind[rest, 1]
        lo, hi = np.where(phi0 <= np.pi / 2, e2, e1), np.where(phi0 <= np.pi / 2, e1, e2 + np.pi)
        mid = (lo + hi) / 2
        Mv = np.einsum("pij,pj->pi", M[rest], v)
        end = np.arctan2(Mv[:, 0], Mv[:, 1])
        end = end + 2 * np.pi * np.round((mid - end) / (2 * np.pi))
        rho[rest] = np.round((end - phi0) / np.pi) / 2
    return rho


def _chart_chunk(potential, pairs, c, tol, max_steps):
    """Classify the Hill potentials ``potential(a, b)`` for ``(a, b)`` in ``pairs`` (one task's work)."""
    t0 = time.perf_counter()
    a0, A, B = _sample_potentials(potential, pairs)
    M, err, steps, wind, converged = _monodromies(a0, A, B, c, tol=tol, max_steps=max_steps)
    classes, t = _classes(M, err, converged)
    rho = _rotation_numbers(M, t, wind, classes)
    return {
        "classes": classes.astype(str), "traces": t, "rotation_numbers": rho, "errors": err,
        "steps": steps, "monodromies": M, "seconds": time.perf_counter() - t0,
    }


# ------------------------------------------------------------- the chart
def _frozen(a):
    a = np.array(a)
    a.setflags(write=False)
    return a


@dataclass(frozen=True, repr=False)
class StabilityChart:
    """Monodromy classes of ``c d^2 + potential(a, b)`` over a grid; arrays are ``(len(b), len(a))``.

    ``classes`` holds the names :func:`hamcheck.virasoro.classify` uses (plus
    ``undetermined``), ``traces`` the monodromy traces, ``rotation_numbers``
    the rotation numbers, ``errors`` the monodromy error estimates relative to
    ``||M||``, ``steps`` the Magnus steps used. ``names`` label the axes (the
    parameter names of ``potential``).
    """

    a_values: np.ndarray
    b_values: np.ndarray
    c: float
    classes: np.ndarray
    traces: np.ndarray
    rotation_numbers: np.ndarray
    errors: np.ndarray
    steps: np.ndarray
    names: tuple = ("a", "b")
    seconds: float = 0.0
    tasks: int = 1
    meta: dict = field(default_factory=dict)

    def __repr__(self) -> str:
        counts = ", ".join(f"{k} {v}" for k, v in self.counts().items())
        return (
            f"StabilityChart({self.names[0]}: {len(self.a_values)} values in [{self.a_values.min():g}, "
            f"{self.a_values.max():g}], {self.names[1]}: {len(self.b_values)} in [{self.b_values.min():g}, "
            f"{self.b_values.max():g}], c={self.c:g}; {counts})"
        )

    def counts(self) -> dict:
        """Grid points per class, in the order of :data:`CHART_CLASSES` (classes that occur)."""
        names, n = np.unique(self.classes, return_counts=True)
        have = dict(zip(names.tolist(), n.tolist()))
        return {k: have[k] for k in CHART_CLASSES if k in have}

    def to_dict(self) -> dict:
        def plain(x):
            return np.where(np.isfinite(x), x, None).tolist() if x.dtype.kind == "f" else x.tolist()

        return {
            "names": list(self.names), "c": self.c,
            self.names[0]: self.a_values.tolist(), self.names[1]: self.b_values.tolist(),
            "classes": self.classes.tolist(), "traces": plain(self.traces),
            "rotation_numbers": plain(self.rotation_numbers), "errors": plain(self.errors),
            "steps": self.steps.tolist(), "counts": self.counts(), "seconds": round(self.seconds, 3),
            "tasks": self.tasks, "hill_operator": "c d^2/dtheta^2 + T on R/2piZ",
        }

    def to_json(self, **kwargs) -> str:
        return json.dumps(self.to_dict(), **kwargs)

    def plot(self, path, title: str | None = None) -> str:
        """PNG of the classes over the plane, the curves trace = +-2 contoured from the traces,
        and a legend of the classes in words. Needs matplotlib (``pip install 'hamcheck[plots]'``)."""
        try:
            import matplotlib

            matplotlib.use("Agg")
            import matplotlib.pyplot as plt
            from matplotlib.colors import BoundaryNorm, ListedColormap
            from matplotlib.lines import Line2D
            from matplotlib.patches import Patch
        except ImportError:
            raise UsageError("StabilityChart.plot needs matplotlib, an optional extra: pip install 'hamcheck[plots]'") from None
        index = {k: i for i, k in enumerate(CHART_CLASSES)}
        codes = np.vectorize(index.get)(self.classes).astype(float)
        cmap = ListedColormap([_COLORS[k] for k in CHART_CLASSES])
        norm = BoundaryNorm(np.arange(len(CHART_CLASSES) + 1) - 0.5, cmap.N)
        fig, ax = plt.subplots(figsize=(7.5, 7.0))
        ax.pcolormesh(self.a_values, self.b_values, codes, cmap=cmap, norm=norm, shading="nearest")
        handles = [Patch(facecolor=_COLORS[k], edgecolor="k", lw=0.3, label=f"{CLASS_WORDS[k]} ({n})")
                   for k, n in self.counts().items()]
        if len(self.a_values) > 1 and len(self.b_values) > 1:
            # clip: hyperbolic traces reach e^(2 pi sqrt|T|) and would flatten the levels
            tr = np.clip(np.nan_to_num(self.traces, nan=0.0), -3.0, 3.0)
            for level, color, style in ((2.0, "k", "-"), (-2.0, "#54278f", "--")):
                if tr.min() < level < tr.max() or (level == -2 and tr.min() <= -2):
                    ax.contour(self.a_values, self.b_values, tr, levels=[level], colors=color, linewidths=1.0, linestyles=style)
                    handles.append(Line2D([], [], color=color, ls=style, label=f"trace = {level:+g} (contoured)"))
        ax.set_xlabel(self.names[0])
        ax.set_ylabel(self.names[1])
        ax.set_title(title or f"Monodromy classes of c d^2 + T, c = {self.c:g}")
        ax.legend(handles=handles, loc="upper center", bbox_to_anchor=(0.5, -0.09), ncol=2, fontsize=8, frameon=False)
        fig.tight_layout()
        fig.savefig(path, dpi=130)
        plt.close(fig)
        return str(path)


def _parameter_names(potential) -> tuple:
    try:
        params = [p.name for p in inspect.signature(potential).parameters.values()
                  if p.kind in (p.POSITIONAL_ONLY, p.POSITIONAL_OR_KEYWORD)]
    except (TypeError, ValueError):
        params = []
    return tuple(params[:2]) if len(params) >= 2 else ("a", "b")


def _grid_values(values, name, expected="finite numbers (at least one)"):
    try:
        arr = np.asarray(values, dtype=float).reshape(-1)
    except (TypeError, ValueError):
        raise UsageError(f"{name} must be {expected}; got {values!r}") from None
    if arr.size == 0 or not np.all(np.isfinite(arr)):
        raise UsageError(f"{name} must be {expected}; got {arr.tolist()[:5]}")
    return arr


def stability_chart(potential, a_values, b_values, *, c: float = 1.0, client=None,
                    tol: float = CHART_TOL, max_steps: int = MAX_STEPS) -> StabilityChart:
    """Classify ``c d^2 + potential(a, b)`` at every ``(a, b)`` of the grid.

    ``potential(a, b)`` returns T for one grid point: a callable of theta
    (vectorised over a numpy array; sampled on 1024 points as classify does),
    samples on a uniform grid, a number, or a :class:`hamcheck.circle.Periodic`.
    With a Dask ``client`` the grid is cut into tasks of at least
    :data:`MIN_TASK_SECONDS` each (sized from a first chunk computed here), and
    ``potential`` runs on the workers. Results are identical either way.

    >>> import numpy as np
    >>> chart = stability_chart(lambda a, b: a + b * np.cos, [0.1, -0.5], [0.0], c=1.0)   # doctest: +SKIP
    """
    (c,) = _grid_values([c], "the central charge c", "a finite non-zero number")
    if c == 0:
        raise UsageError("the central charge c must be a finite non-zero number; got 0")
    c = float(c)
    if not callable(potential):
        raise UsageError(f"potential must be a function potential(a, b) returning T; got {type(potential).__name__}")
    av, bv = _grid_values(a_values, "a_values"), _grid_values(b_values, "b_values")
    pairs = [(float(a), float(b)) for b in bv for a in av]  # row-major: b rows, a columns
    t0 = time.perf_counter()
    if client is None:
        parts = [(np.arange(len(pairs)), _chart_chunk(potential, pairs, c, tol, max_steps))]
    else:
        parts = _chart_on_client(client, potential, pairs, c, tol, max_steps)
    order = np.concatenate([idx for idx, _ in parts])
    merged = {}
    for k in ("classes", "traces", "rotation_numbers", "errors", "steps"):
        values = np.concatenate([p[k] for _, p in parts])
        merged[k] = np.empty_like(values)
        merged[k][order] = values
    shape = (len(bv), len(av))
    return StabilityChart(
        _frozen(av), _frozen(bv), c,
        *(_frozen(merged[k].reshape(shape)) for k in ("classes", "traces", "rotation_numbers", "errors", "steps")),
        names=_parameter_names(potential), seconds=time.perf_counter() - t0, tasks=len(parts),
        meta={"task_seconds": [round(p["seconds"], 3) for _, p in parts]},
    )


def _chart_on_client(client, potential, pairs, c, tol, max_steps):
    """``[(indices, part), ...]``: 256 points spread over the grid here (the cost per point varies
    across the plane), the rest on the workers in tasks of >= MIN_TASK_SECONDS by that measure."""
    from ..distributed import gather_in_order

    P = len(pairs)
    pilot = np.unique(np.linspace(0, P - 1, min(P, 256)).astype(int))
    head = _chart_chunk(potential, [pairs[i] for i in pilot], c, tol, max_steps)
    per_point = max(head["seconds"], 1e-6) / len(pilot)
    size = max(len(pilot), int(math.ceil(MIN_TASK_SECONDS / per_point)))
    rest = np.setdiff1d(np.arange(P), pilot)
    chunks = [rest[i : i + size] for i in range(0, len(rest), size)]
    futures = [client.submit(_chart_chunk, potential, [pairs[i] for i in ch], c, tol, max_steps, pure=False) for ch in chunks]
    return [(pilot, head)] + list(zip(chunks, gather_in_order(futures, what="a chunk of the stability chart")))


def load_potential_family(path):
    """``(potential, c)`` from a Python file defining ``potential(a, b)`` and, optionally, ``c``."""
    import runpy

    try:
        ns = runpy.run_path(str(path))
    except FileNotFoundError:
        raise UsageError(f"no such file: {path}; expected a Python file defining potential(a, b) and c") from None
    except Exception as exc:
        raise UsageError(f"running {path} raised {type(exc).__name__}: {exc}") from None
    if not callable(ns.get("potential")):
        raise UsageError(f"{path} does not define a function potential(a, b); expected def potential(a, b): return T")
    return ns["potential"], ns.get("c")
