"""The truncated orbit chart of a constant connection ``a e_3`` at level c, with its exact KKS form (jax).

Chart ``x -> g_x = exp(X_x)``, ``X_x = sum_i x_i b_i`` over real Fourier modes;
point ``A(x) = g_x . A0``; form ``omega_ij(x) = int <A, [xi_i, xi_j]> + c int <xi_i, xi_j'>``
with ``xi_i = (d_i g) g^-1``. su(2) is written in real coordinates:
``[x.e, y.e] = (x cross y).e``, ``<x.e, y.e> = x.y / 2``,
``Ad_{exp(x.e)}`` = rotation by ``|x|`` about ``x``, with Taylor branches so
every derivative is exact at 0 (no complex matrices, cheap third derivatives).

>>> m = orbit_model(0.3, 1.0, 1, grid=32)
>>> m.dim, m.construction.grid
(8, 32)
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np

from .. import circle
from .._jax import jax, jnp
from ..algebra import LieAlgebra
from ..errors import UsageError
from ..model import Convention, Model
from .groups import _check_level, grid
from .tolerances import TOLERANCES

__all__ = [
    "su2_Ad",
    "su2_dexp",
    "ChartFormulas",
    "STANDARD",
    "chart_labels",
    "degenerate_modes",
    "kks_form_at_base",
    "orbit_model",
    "LoopOrbitChart",
    "OrbitResolution",
    "orbit_resolution_study",
    "summarize_resolution",
]

#: The resolution study's result (shared with the Virasoro chart).
OrbitResolution = circle.ChartResolution
summarize_resolution = circle.summarize_resolution

# su(2) in coordinates: [x.e, y.e] = (x cross y).e, <x.e, y.e> = x.y / 2,
# Ad_{exp(x.e)} = rotation by |x| about x. The chart's functions are written
# with these real 3-vectors (no complex matrices), which keeps third
# derivatives (closedness of the form) cheap to compile.
_SERIES_TERMS = 10


def _series(s, offset):
    """``sum_k (-s)^k / (2k + offset)!`` by Horner (jax)."""
    coeffs = [(-1) ** k / math.factorial(2 * k + offset) for k in range(_SERIES_TERMS)]
    out = coeffs[-1]
    for co in coeffs[-2::-1]:
        out = out * s + co
    return out


def _coefficients(s):
    """``f1 = (1 - cos r)/r^2`` and ``f2 = (r - sin r)/r^3`` of ``s = r^2`` (jax, elementwise).

    Closed forms for ``s >= 1``, Taylor series below, so every derivative is
    exact at ``s = 0``: the first omitted term is ``1/22! < 1e-21`` at ``s = 1``,
    and above 1 the closed forms lose no digits to cancellation.
    """
    small = s < 1.0
    t = jnp.where(small, 1.0, s)  # double-where: no NaN gradients from sqrt(0)
    r = jnp.sqrt(t)
    f1 = jnp.where(small, _series(s, 2), (1 - jnp.cos(r)) / t)
    f2 = jnp.where(small, _series(s, 3), (r - jnp.sin(r)) / (t * r))
    return f1, f2


def su2_Ad(x, y):
    """``Ad_{exp(x.e)} y`` on coordinates (last axis): rotation by ``|x|`` about ``x`` (jax).

    ``y + f0 x*y + f1 x*(x*y)`` with ``f0 = sin r / r = 1 - r^2 f2``.
    """
    s = jnp.sum(x * x, axis=-1, keepdims=True)
    f1, f2 = _coefficients(s)
    xy = jnp.cross(x, y)
    return y + (1 - s * f2) * xy + f1 * jnp.cross(x, xy)


def su2_dexp(x, y):
    """Right-trivialised derivative of exp: ``(d exp_X[Y]) exp(-X)`` in coordinates (jax).

    ``(e^ad - 1)/ad = 1 + f1 ad + f2 ad^2``; exact at ``x = 0`` with all derivatives.
    """
    s = jnp.sum(x * x, axis=-1, keepdims=True)
    f1, f2 = _coefficients(s)
    xy = jnp.cross(x, y)
    return y + f1 * xy + f2 * jnp.cross(x, xy)


@dataclass(frozen=True)
class ChartFormulas:
    """The formulas an orbit chart is built from (the standard ones by default).

    Each field can be switched to a common mistake so that its effect on the
    checks can be seen (the negative controls of ``tests/test_loop_groups_orbit_chart.py``):

    * ``trivialization``: ``"right"`` uses ``xi_i = (d_i g) g^-1`` (correct:
      ``d_i A = delta_{xi_i} A``); ``"left"`` uses ``g^-1 d_i g``.
    * ``action_sign``: ``+1`` for ``g A0 g^-1 + c g' g^-1``; ``-1`` flips the
      sign of ``c g' g^-1`` (the level ``-c`` orbit).
    * ``cocycle_factor``: coefficient of ``c int <xi_i, xi_j'>`` in the form.
    * ``form_sign``: overall sign of the form.
    """

    trivialization: str = "right"
    action_sign: int = 1
    cocycle_factor: float = 1.0
    form_sign: int = 1

    def __post_init__(self):
        if self.trivialization not in ("right", "left"):
            raise UsageError(f"trivialization must be 'right' or 'left'; got {self.trivialization!r}")
        if self.action_sign not in (1, -1) or self.form_sign not in (1, -1):
            raise UsageError("action_sign and form_sign must be +1 or -1")


STANDARD = ChartFormulas()

def chart_labels(modes) -> list[tuple[int, int, str]]:
    """``(mode, component a, "cos"/"sin"/"const")`` of each chart coordinate, in order.

    >>> chart_labels([0, 1])[:4]
    [(0, 0, 'const'), (0, 1, 'const'), (1, 0, 'cos'), (1, 0, 'sin')]
    """
    out = []
    for n in modes:
        if n == 0:
            out += [(0, 0, "const"), (0, 1, "const")]
        else:
            out += [(n, a, kind) for a in range(3) for kind in ("cos", "sin")]
    return out


def _normalise_modes(modes) -> tuple[int, ...]:
    if isinstance(modes, (int, np.integer)) and not isinstance(modes, bool):
        if modes < 0:
            raise UsageError(f"modes must be >= 0 (an int K means the modes 0..K); got {modes}")
        return tuple(range(int(modes) + 1))
    try:
        ms = sorted({int(m) for m in modes})
    except (TypeError, ValueError):
        raise UsageError(f"modes must be an int K (modes 0..K) or a list of non-negative ints; got {modes!r}") from None
    if not ms or ms[0] < 0:
        raise UsageError(f"modes must be non-empty and non-negative; got {list(modes)}")
    return tuple(ms)


def _design(modes, M):
    """``P[i, m, :]`` = coordinates of basis loop i at theta_m, and its theta-derivative."""
    labels = chart_labels(modes)
    th = grid(M)
    P = np.zeros((len(labels), M, 3))
    dP = np.zeros_like(P)
    for i, (n, a, kind) in enumerate(labels):
        if kind == "const":
            P[i, :, a] = 1.0
        elif kind == "cos":
            P[i, :, a], dP[i, :, a] = np.cos(n * th), -n * np.sin(n * th)
        else:
            P[i, :, a], dP[i, :, a] = np.sin(n * th), n * np.cos(n * th)
    return labels, P, dP


def _symmetry_fields(labels):
    """Linear vector fields of the torus e_3 and of the rotation on chart coordinates."""
    d = len(labels)
    index = {lab: i for i, lab in enumerate(labels)}
    V3 = np.zeros((d, d))
    Vr = np.zeros((d, d))
    for i, (n, a, kind) in enumerate(labels):
        # [e3, x.e] = (-x2, x1, 0): the e1 slot receives -x2, the e2 slot receives x1
        if a == 0:
            V3[i, index[(n, 1, kind)]] = -1.0
        elif a == 1:
            V3[i, index[(n, 0, kind)]] = 1.0
        # theta -> theta + t: d/dt (x_c cos + x_s sin)(theta + t) = n x_s cos - n x_c sin
        if kind == "cos":
            Vr[i, index[(n, a, "sin")]] = n
        elif kind == "sin":
            Vr[i, index[(n, a, "cos")]] = -n
    return V3, Vr


def degenerate_modes(a: float, c: float, modes) -> list[int]:
    """Modes n of the chart with ``|a/c| = n``: the form is degenerate there at the base point."""
    q = abs(a / c)
    n = round(q)
    return [n] if abs(q - n) <= TOLERANCES.resonance * max(1.0, q) and n in _normalise_modes(modes) else []


def kks_form_at_base(a: float, c: float, modes) -> np.ndarray:
    """The closed block formula of the form at ``A0 = a e_3`` in chart coordinates.

    Per mode n >= 1 on (e1 cos, e1 sin, e2 cos, e2 sin): ``(pi/2)[c n I(x)J + a J(x)I]``;
    e_3 sector ``omega(e3 cos, e3 sin) = pi c n / 2``; constants ``omega(e1, e2) = pi a``.
    """
    labels = chart_labels(_normalise_modes(modes))
    index = {lab: i for i, lab in enumerate(labels)}
    W = np.zeros((len(labels), len(labels)))

    def put(i, j, v):
        W[i, j], W[j, i] = v, -v

    for n in sorted({lab[0] for lab in labels}):
        if n == 0:
            put(index[(0, 0, "const")], index[(0, 1, "const")], np.pi * a)
            continue
        for comp in range(3):
            put(index[(n, comp, "cos")], index[(n, comp, "sin")], np.pi * c * n / 2)
        for kind in ("cos", "sin"):
            put(index[(n, 0, kind)], index[(n, 1, kind)], np.pi * a / 2)
    return W


def _formula_params(formulas: ChartFormulas):
    return jnp.array([formulas.action_sign, formulas.cocycle_factor, formulas.form_sign], dtype=jnp.float64)


def _orbit_functions(a, c, modes, M, formulas: ChartFormulas):
    """Jax functions of the chart; ``weights`` (M,) are the quadrature weights.

    Only ``formulas.trivialization`` is fixed here; the signs and the cocycle
    factor are a runtime argument ``params`` of ``form`` and ``moment``.

    Passing the weights as an argument lets a resolution study reuse one
    compiled function for every sub-grid of a fine grid (weights 0 off it).
    """
    labels, P_np, dP_np = _design(modes, M)
    P, dP = jnp.asarray(P_np), jnp.asarray(dP_np)
    n2 = np.array([lab[0] ** 2 for lab in labels], dtype=float)
    ddP = -jnp.asarray(n2)[:, None, None] * P  # P'' for trig basis loops (constants: 0)
    a0 = jnp.array([0.0, 0.0, a])
    left = formulas.trivialization == "left"

    def frame(X, Y):
        """``(dexp_X Y, Ad_X a0)``, or ``Ad_X^-1 dexp_X Y`` for the left trivialisation."""
        s = jnp.sum(X * X, axis=-1, keepdims=True)
        f1, f2 = _coefficients(s)
        XY = jnp.cross(X, Y)
        D = Y + f1 * XY + f2 * jnp.cross(X, XY)
        Xa = jnp.cross(X, a0)
        R = a0 + (1 - s * f2) * Xa + f1 * jnp.cross(X, Xa)
        if left:
            XD = jnp.cross(X, D)
            D = D - (1 - s * f2) * XD + f1 * jnp.cross(X, XD)
        return D, R

    def fields(x, lvl):
        """Point ``A(x)`` (M, 3), ``xi_i`` (dim, M, 3) and their exact theta-derivatives."""
        X = jnp.einsum("i,imk->mk", x, P)
        dX = jnp.einsum("i,imk->mk", x, dP)
        ddX = jnp.einsum("i,imk->mk", x, ddP)
        Y = jnp.concatenate([P, dX[None]], axis=0)
        dY = jnp.concatenate([dP, ddX[None]], axis=0)
        (D, R), (dD, _) = jax.jvp(frame, (X, Y), (dX, dY))
        # the point is g A0 g^-1 + c g' g^-1 whatever the trivialisation used for xi
        g_right = frame_right(X, dX) if left else D[-1]
        return R + lvl * g_right, D[:-1], dD[:-1]

    def frame_right(X, dX):
        s = jnp.sum(X * X, axis=-1, keepdims=True)
        f1, f2 = _coefficients(s)
        XY = jnp.cross(X, dX)
        return dX + f1 * XY + f2 * jnp.cross(X, XY)

    def form(x, weights, params):
        """``params = (action_sign, cocycle_factor, form_sign)`` (runtime values: one compilation for all)."""
        A, xi, dxi = fields(x, params[0] * c)
        wxi = xi * (0.5 * weights)[None, :, None]  # <u, v> = u.v / 2, trapezoid weights
        # <A, [xi_i, xi_j]> = (1/2) A.(xi_i x xi_j) = (1/2) (A x xi_i).xi_j
        W = jnp.einsum("imk,jmk->ij", jnp.cross(A[None], wxi), xi) + params[1] * c * jnp.einsum("imk,jmk->ij", wxi, dxi)
        return params[2] * W

    def connection(x, params):
        lvl = params[0] * c
        X = jnp.einsum("i,imk->mk", x, P)
        dX = jnp.einsum("i,imk->mk", x, dP)
        return frame(X, X[None])[1] + lvl * frame_right(X, dX)

    def moment(x, weights, params):
        A = connection(x, params)
        h3 = 0.5 * jnp.sum(weights * A[:, 2])  # int <A, e3>
        hrot = 0.25 * jnp.sum(weights[:, None] * A * A) / c  # (1/2c) int <A, A>
        return jnp.array([h3, hrot])

    return labels, connection, form, moment


def orbit_model(a: float, c: float, modes, grid=None, *, radius: float = 0.5, formulas: ChartFormulas = STANDARD, name=None):
    """A truncated chart of the coadjoint orbit of ``A0 = a e_3`` at level ``c``.

    Chart ``x -> g_x = exp(X_x)``, ``X_x = sum_i x_i b_i`` over the real Fourier
    modes in ``modes`` (an int K means 0..K; mode 0 carries e1, e2 only, since
    e_3 stabilises ``A0``); point ``A(x) = g_x . A0``. The form is the pulled-back
    Kirillov–Kostant–Souriau form, exactly (the only error is the quadrature on
    ``grid`` points, default ``max(32, 16 (max mode + 1))``):

        omega_ij(x) = int <A, [xi_i, xi_j]> + c int <xi_i, xi_j'>,   xi_i = (d_i g) g^-1.

    Acting algebra (abelian): ``torus_e3`` (constant loops ``exp(t e_3)``,
    moment ``int <A, e_3>``) and ``rotation`` (``A(theta) -> A(theta + t)``,
    moment ``(1/2c) int <A, A>``). Convention ``sign=+1, flow=+1``:
    ``iota_{X_xi} omega = d<mu, xi>``. Sampled points: normal with norm about
    ``radius``.

    Warns (``UserWarning``) when ``a/c`` is an integer n among the modes: the
    form is degenerate there (drop mode n).

    >>> import hamcheck
    >>> m = orbit_model(0.3, 1.0, 1, grid=32)
    >>> m.dim, hamcheck.check(m, points=4).passed
    (8, True)
    """
    try:
        a = float(a)
    except (TypeError, ValueError):
        raise UsageError(f"a must be a real number (A0 = a e_3); got {a!r}") from None
    c = _check_level(c)
    modes = _normalise_modes(modes)
    M = max(32, 16 * (max(modes) + 1)) if grid is None else grid
    if isinstance(M, bool) or not isinstance(M, (int, np.integer)) or M < 4:
        raise UsageError(f"grid must be an integer number of quadrature points >= 4; got {grid!r}")
    if M <= 2 * max(modes):
        raise UsageError(f"grid={M} cannot resolve mode {max(modes)}; use at least {16 * (max(modes) + 1)} points")
    for n in degenerate_modes(a, c, modes):
        warnings.warn(
            f"a/c = {a / c:g} is an integer: the orbit form is degenerate in mode n={n} of the chart "
            f"(the loops e1, e2 times {'constants' if n == 0 else f'cos {n}theta, sin {n}theta'} stabilise A0); "
            f"drop mode {n} from modes",
            UserWarning,
            stacklevel=2,
        )
    labels, _conn, form_w, moment_w = _orbit_functions(a, c, modes, int(M), formulas)
    weights = jnp.full(int(M), 2 * np.pi / int(M))
    # jit once here: the declaration-time validation then runs one compiled
    # program instead of dispatching (and compiling) hundreds of ops eagerly
    params = _formula_params(formulas)
    form = jax.jit(lambda x: form_w(x, weights, params))
    moment = jax.jit(lambda x: moment_w(x, weights, params))
    V3, Vr = _symmetry_fields(labels)
    V = jnp.asarray(np.stack([V3, Vr]))
    algebra = LieAlgebra.from_structure_constants(np.zeros((2, 2, 2)), names=["torus_e3", "rotation"])
    dim = len(labels)
    scale = float(radius) / math.sqrt(dim)
    model = Model(
        name or f"loop_orbit_a{a:g}_c{c:g}_K{max(modes)}",
        dim,
        form=form,
        algebra=algebra,
        moment=moment,
        vector_fields=lambda x: V @ x,
        sample=lambda rng: scale * rng.standard_normal(dim),
        convention=Convention(sign=1, flow=1),
        chart_labels=labels,
        construction=LoopOrbitChart(a=float(a), c=float(c), modes=tuple(modes), grid=int(M),
                                    connection=lambda x: _conn(jnp.asarray(x), params)),
    )
    return model


@dataclass(frozen=True)
class LoopOrbitChart:
    """What :func:`orbit_model` built: the orbit of ``a e_3`` at level ``c``, its modes and grid.

    ``connection(x)`` is the connection (``(grid, 3)`` samples in the basis ``e_k``) at the chart point ``x``.
    """

    a: float
    c: float
    modes: tuple
    grid: int
    connection: object = field(repr=False, compare=False)


def orbit_resolution_study(
    a: float,
    c: float,
    modes,
    grids=(8, 16, 24, 32, 48),
    *,
    checks=("antisymmetric", "closed", "moment_map"),
    points: int = 4,
    seed: int = 0,
    radius: float = 0.9,
    formulas: ChartFormulas = STANDARD,
) -> circle.ChartResolution:
    """Residuals of the orbit chart's checks as the quadrature grid M grows.

    The protocol of :func:`hamcheck.circle.check_resolution_study`: for each
    grid M the chart :func:`orbit_model` is built with ``grid=M`` and checked
    by a real :func:`hamcheck.check` with ``only=checks`` (worst over ``points``
    sampled points of norm about ``radius``, the same seed on every grid); each
    column gets a fitted decay. One compilation per grid (1-3 s each).

    >>> s = orbit_resolution_study(0.3, 1.0, 1, grids=(8, 16, 32), points=2)   # doctest: +SKIP
    >>> s.verified                                                          # doctest: +SKIP
    True
    """
    modes = _normalise_modes(modes)
    c = _check_level(c)
    grids = tuple(int(g) for g in grids)
    if len(grids) < 2 or any(g <= 2 * max(modes) for g in grids):
        raise UsageError(f"give at least two grids, each > 2 x the highest mode {max(modes)}; got {list(grids)}")

    def build(M):
        return orbit_model(a, c, modes, grid=M, radius=radius, formulas=formulas)

    return circle.check_resolution_study(build, grids, checks=checks, points=points, seed=seed)
