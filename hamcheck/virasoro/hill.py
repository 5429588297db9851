"""Hill's equation ``c psi'' + T psi = 0``: monodromy, class, rotation number, stabilizers, classification.

The orbit of ``(T, c)`` under the coadjoint action is determined by the
conjugacy class of the monodromy (its trace, and the orientation data of the
rotation number). The monodromy comes from :func:`hamcheck.circle.propagate`;
the stabilizer is computed two ways through :func:`hamcheck.circle.kernel`
(from periodic products of solutions, and as the kernel of
``X -> delta_X T`` on Fourier modes); :func:`classify` returns a
:class:`hamcheck.circle.OrbitClassification`.

>>> inv = classify(1.0, c=1.0)          # T0/c = 1 = n^2/4 with n = 2
>>> inv.orbit_class, inv.stabilizer_dim, inv.report().passed
('+identity', 3, True)
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from .. import circle
from ..circle.classification import format_classification
from ..circle import TOLERANCES as CIRCLE
from .._jax import jax, jnp, quick_jit
from ..errors import UsageError
from .diffeomorphisms import _as_periodic, _check_c, schwarzian_from_derivatives
from .tolerances import TOLERANCES

__all__ = [
    "Monodromy",
    "hill_generator",
    "monodromy",
    "rotation_number",
    "stabilizer_fourier",
    "stabilizer_ode",
    "constant_representative",
    "classify",
    "classify_file",
    "format_classification",
    "potential_from_developing_map",
    "developing_map",
]

TWO_PI = 2.0 * np.pi

#: The monodromy is a :class:`hamcheck.circle.Propagation` (matrix, error, steps, trace, fundamental()).
Monodromy = circle.Propagation


def hill_generator(T, c) -> circle.Periodic:
    """``A = [[0, 1], [-T/c, 0]]`` of the first-order system ``Y' = A Y`` as a trigonometric polynomial."""
    p = _as_periodic(T)
    k = p.wavenumbers
    co = np.zeros((k.size, 2, 2), dtype=complex)
    co[:, 1, 0] = -p.coefficients / _check_c(c)
    if not np.any(k == 0):
        k, co = np.r_[k, 0], np.concatenate([co, np.zeros((1, 2, 2), complex)])
    co[np.flatnonzero(k == 0)[0], 0, 1] = 1.0
    return circle.Periodic(co, k, True)


def monodromy(T, c, *, tol: float | None = None, min_steps: int = 64, max_steps: int = 2**21) -> Monodromy:
    """The Hill monodromy of ``(T, c)`` to an estimated relative error ``tol`` (default ``TOLERANCES.monodromy``).

    ``T``: a number, samples on a uniform grid, a callable of theta or a
    :class:`hamcheck.circle.Periodic`. ``matrix`` maps ``(psi, psi')(0)`` to
    ``(psi, psi')(2 pi)``. Raises :class:`hamcheck.ConvergenceError` when the
    target cannot be reached within ``max_steps``.

    >>> import numpy as np
    >>> m = monodromy(0.09, c=1.0)          # k = 0.3: trace 2 cos(0.6 pi)
    >>> bool(abs(m.trace - 2 * np.cos(0.6 * np.pi)) < 1e-12)
    True
    """
    gen = hill_generator(T, c)
    return circle.propagate(gen, tol=TOLERANCES.monodromy if tol is None else tol, min_steps=min_steps,
                            max_steps=max_steps, expm=circle.expm_traceless2)


# ------------------------------------------------------------ invariants
def _class_of(m: Monodromy):
    M = m.matrix
    t = m.trace
    scale = max(np.abs(M).max(), 1.0)
    tol = TOLERANCES.trace_class * scale + CIRCLE.error_margin * m.error * scale
    for s, name in ((1, "+"), (-1, "-")):
        if abs(t - 2 * s) <= tol:
            if np.abs(M - s * np.eye(2)).max() <= tol:
                return f"{name}identity"
            return f"parabolic{name}"
    return "elliptic" if abs(t) < 2 else "hyperbolic"


def _angles(P, v):
    """Prüfer angles phi = atan2(psi, psi') along the path ``P[j] v``, unwrapped."""
    Y = P @ v
    return np.unwrap(np.arctan2(Y[:, 0], Y[:, 1]))


def rotation_number(m: Monodromy, P=None) -> float:
    """``rho = lim phi(theta)/theta`` for the Prüfer angle ``phi' = cos^2 phi + (T/c) sin^2 phi``.

    Exact from one period: for elliptic monodromy ``2 pi rho = alpha + 2 pi m``
    with ``cos alpha = tr/2`` and the integer part from the winding of one
    solution; otherwise ``2 pi rho`` is the winding of an eigen-direction (a
    multiple of pi).
    """
    P = m.fundamental() if P is None else P
    M = m.matrix
    cls = _class_of(m)
    if cls == "elliptic":
        # phi is the angle of w = (psi', psi): orientation reversed w.r.t. (psi, psi')
        sin_sign = np.sign(-M[1, 0])
        alpha = math.acos(max(-1.0, min(1.0, m.trace / 2)))
        if sin_sign < 0:
            alpha = TWO_PI - alpha
        D = _angles(P, np.array([1.0, 0.0]))
        wind = math.floor((D[-1] - D[0]) / TWO_PI)
        return (alpha + TWO_PI * wind) / TWO_PI
    if cls.endswith("identity"):
        v = np.array([1.0, 0.0])
    else:
        w, V = np.linalg.eig(M)
        v = np.real(V[:, int(np.argmax(np.abs(w)))])
    D = _angles(P, v)
    return round((D[-1] - D[0]) / np.pi) / 2.0


def stabilizer_ode(m: Monodromy, P=None, M: int | None = None):
    """Stabilizer from periodic products of solutions: ``X = psi Q psi^T`` with ``M Q M^T = Q``.

    Returns ``(dim, basis)`` with ``basis`` of shape (dim, M) on the grid of
    ``M`` points (default: the step grid without its end point).
    """
    P = m.fundamental() if P is None else P
    Mm = m.matrix
    sym = [np.array([[1.0, 0.0], [0.0, 0.0]]), np.array([[0.0, 1.0], [1.0, 0.0]]), np.array([[0.0, 0.0], [0.0, 1.0]])]
    L = np.stack([(Mm @ S @ Mm.T - S)[np.triu_indices(2)] for S in sym], axis=1)
    ker = circle.kernel(L, scale=max(np.abs(Mm).max() ** 2, 1.0), error=m.error)
    null, dim = ker.basis, ker.dim
    psi = P[:-1, 0, :]  # rows (psi1, psi2)(theta_j)
    if M is not None:
        if m.steps % M:
            raise UsageError(f"M = {M} must divide the step count {m.steps}")
        psi = psi[:: m.steps // M]
    basis = []
    for coef in null:
        Q = sum(cf * S for cf, S in zip(coef, sym))
        X = np.einsum("ja,ab,jb->j", psi, Q, psi)
        basis.append(X / np.abs(X).max())
    return dim, np.array(basis).reshape(dim, psi.shape[0])


def _fourier_kernel(p: circle.Periodic, c: float, K: int):
    d = p.degree
    Mg = 4 * (K + d) + 8
    th = circle.grid(Mg)
    Tg = p.on_grid(Mg)
    T1 = p.derivative().on_grid(Mg)
    n = circle.vector_modes(K).astype(float)
    is_sin = np.r_[False, np.tile([False, True], K)]
    ph = np.outer(th, n)

    def basis(order):
        s = order * np.pi / 2 + np.where(is_sin, -np.pi / 2, 0.0)  # sin x = cos(x - pi/2)
        return n**order * np.cos(ph + s)

    X, X1, X3 = basis(0), basis(1), basis(3)
    D = X * T1[:, None] + 2 * X1 * Tg[:, None] + 0.5 * c * X3
    # a bound on the terms of delta_X T per mode; the +1 keeps mode 0's scale finite
    bounds = 0.5 * abs(c) * (n**3 + 1) + 2 * (n + 1) * np.abs(Tg).max() + np.abs(T1).max()
    return circle.kernel(circle.samples_to_mode_vector(D, K + d) / bounds[None, :]), bounds


def stabilizer_fourier(T, c, K: int | None = None, M: int | None = None):
    """Stabilizer as the kernel of ``X -> delta_X T`` on real modes ``<= K``.

    Columns are scaled by a bound on their terms (``|c|/2 (n^3 + 1) + 2 (n + 1)
    max|T| + max|T'|``) so the singular values are relative. For a non-constant T the
    stabilizer is not band-limited and its smallest singular values fall
    spectrally with K: without K, K doubles from ``max(24, 2 deg T + 8)`` until a
    kernel appears (the stabilizer is never trivial). Returns ``(dim, basis,
    singular_values)``; basis on M grid points.
    """
    c = _check_c(c)
    p = _as_periodic(T)
    d = p.degree
    Ks = [int(K)] if K is not None else [max(24, 2 * d + 8) * 2**j for j in range(3)]
    for Kc in Ks:
        ker, bounds = _fourier_kernel(p, c, Kc)
        if ker.dim:
            break
    Mout = M or 4 * (Kc + d) + 8
    basis = []
    for v in ker.basis:
        cf = v / bounds
        X = circle.Periodic.from_real_modes(np.arange(1, Kc + 1), cf[1::2], cf[2::2], cf[0]).on_grid(Mout)
        basis.append(X / np.abs(X).max())
    return len(basis), np.array(basis).reshape(len(basis), Mout), ker.relative


def constant_representative(cls: str, rho: float, trace: float, matrix, c: float):
    """The constant ``T0`` on the orbit with these invariants, or ``(None, reason)``.

    Orbits of constants (from memory; classical, e.g. Balog–Fehér–Palla 1998):
    elliptic with ``2 rho`` not an integer: ``T0 = c rho^2``; ``+-identity`` with
    ``rho = n/2``: ``T0 = c n^2/4``; hyperbolic with ``rho = 0``:
    ``T0 = -c (arccosh(tr/2) / 2pi)^2``; parabolic with ``rho = 0`` of the
    orientation of ``T0 = 0`` (``M - I = [[0, 2pi], [0, 0]]``): ``T0 = 0``.
    """
    if cls == "elliptic":
        return c * rho**2, "elliptic: T0 = c rho^2"
    if cls.endswith("identity"):
        n = int(round(2 * rho))
        if n >= 1:
            return c * n**2 / 4, f"central monodromy with rho = {n}/2: T0 = c n^2/4, n = {n}"
        return None, "identity monodromy with rotation number 0 has no constant representative"
    if cls == "hyperbolic":
        if rho == 0 and trace > 2:
            return -c * (math.acosh(trace / 2) / TWO_PI) ** 2, "hyperbolic with rho = 0: T0 = -c (arccosh(tr/2)/2pi)^2"
        return None, f"hyperbolic with rotation number {rho:g} != 0: no constant on this orbit"
    if cls == "parabolic+" and rho == 0:
        N = np.asarray(matrix) - np.eye(2)
        if N[1, 0] - N[0, 1] < 0:
            return 0.0, "parabolic with rho = 0, orientation of T0 = 0"
        return None, "parabolic with rho = 0 but the orientation opposite to T0 = 0: no constant on this orbit"
    return None, f"{cls} with rotation number {rho:g}: no constant on this orbit"


def _constant_trace(T0: float, c: float) -> float:
    """Trace of the monodromy of a constant: ``2 cos(2 pi sqrt(T0/c))``, ``2 cosh(2 pi sqrt(-T0/c))``, 2 at 0."""
    r = T0 / c
    return 2 * math.cos(TWO_PI * math.sqrt(r)) if r > 0 else 2 * math.cosh(TWO_PI * math.sqrt(-r))


def classify(T, c, *, K: int | None = None, tol: float | None = None) -> circle.OrbitClassification:
    """Class and invariants of the Hill potential ``(T, c)`` as a :class:`hamcheck.circle.OrbitClassification`.

    Class: elliptic, hyperbolic, parabolic+/-, +identity, -identity; the
    stabilizer from the solutions (``stabilizer_dim``) and from the Fourier
    kernel on modes ``<= K`` (``stabilizer_dim_fourier``; K doubles from a
    default when not given) with the sine of the largest principal angle
    between the two bases; the constant ``T0`` on the orbit, if any. ``tol``
    is the monodromy's target (default ``TOLERANCES.monodromy``).
    """
    c = _check_c(c)
    p = _as_periodic(T)
    m = monodromy(p, c, tol=tol)
    P = m.fundamental()
    cls = _class_of(m)
    rho = rotation_number(m, P)
    Mcmp = 64
    while m.steps % Mcmp:
        Mcmp //= 2
    dim_ode, B_ode = stabilizer_ode(m, P, M=Mcmp)
    dim_f, B_f, svals = stabilizer_fourier(p, c, K=K, M=Mcmp)
    T0, note = constant_representative(cls, rho, m.trace, m.matrix, c)
    return circle.OrbitClassification(
        family="virasoro", group="Virasoro", c=c, orbit_class=cls, trace=m.trace, matrix_name="monodromy",
        matrix=m.matrix, error=m.error, steps=m.steps, rotation_number=rho, stabilizer_dim=dim_ode,
        stabilizer_dim_fourier=dim_f, stabilizer_agreement=circle.subspace_distance(B_ode, B_f),
        stabilizer_method="solutions", representative=T0, representative_note=note,
        representative_trace=None if T0 is None else _constant_trace(T0, c), representative_label="T0",
        details={"modes": p.degree}, stabilizer_singular_values={"fourier": np.sort(svals)[: dim_f + 2].tolist()},
        replay=f"hamcheck.virasoro.classify(T, c={c:g}" + ("" if K is None else f", K={K}") + ")",
    )


def classify_file(path, c=None, *, M: int = 512) -> circle.OrbitClassification:
    """Load T from a .npy/.csv/.py file (:func:`hamcheck.circle.read_input`) and classify it.

    ``c`` from the argument, else from a .py file's ``c``; one of them is required.
    """
    data = circle.read_input(path, "T", c, shape=(), what="real scalar samples (one per grid point)", M=M)
    out = classify(data.values, data.c)
    return dataclasses.replace(
        out, source=data.source, input=data.kind, samples=data.M, spectral_tail=data.spectral_tail,
        warning=data.warning, replay=f"hamcheck classify {data.source} --c {_check_c(data.c):g}",
    )


# ------------------------------------------------------ projective structures
def potential_from_developing_map(f, c, M: int = 256) -> np.ndarray:
    """``(c/2) S(f)`` on M grid points for a developing map ``f`` (a jax-traceable callable of theta).

    ``f(theta + 2pi) = A . f(theta)`` for a Möbius A; the potential is periodic
    and its monodromy class is that of A (trace up to sign, as A is projective).
    Give ``f`` without poles on the circle (e.g. in an affine chart that
    avoids infinity, or as ``tan`` of a smooth angle written with jnp).
    """
    c = _check_c(c)
    th = jnp.asarray(circle.grid(M))

    @quick_jit
    def S_of(t):
        g1 = jax.grad(f)
        g2 = jax.grad(g1)
        g3 = jax.grad(g2)
        return jax.vmap(lambda s: schwarzian_from_derivatives(g1(s), g2(s), g3(s)))(t)

    try:
        S = S_of(th)
    except Exception as exc:
        raise UsageError(f"could not differentiate the developing map f ({type(exc).__name__}: {exc}); write it with jax.numpy") from None
    S = np.asarray(S)
    if not np.all(np.isfinite(S)):
        raise UsageError("S(f) is not finite on the grid: f has a pole or a critical point there; use a chart without poles")
    return 0.5 * c * S


def developing_map(T, c, M: int = 256) -> dict:
    """A developing map for ``(T, c)``: ``f = psi1 / psi2`` with ``psi1(0) = 1, psi2'(0) = 1``.

    Returns ``psi`` (shape (M, 2): psi1, psi2 on the grid), ``angle`` (a
    smooth lift of ``atan2(psi1, psi2)``, so ``f = tan(angle)``), and ``mobius``
    ``A = M^T`` with ``f(theta + 2pi) = (A00 f + A01)/(A10 f + A11)``.
    """
    c = _check_c(c)
    mono = monodromy(T, c, min_steps=int(M))
    P = mono.fundamental()
    psi = P[:-1, 0, :][:: mono.steps // M]
    angle = np.unwrap(np.arctan2(psi[:, 0], psi[:, 1]))
    return {"psi": psi, "angle": angle, "mobius": mono.matrix.T, "monodromy": mono}
