"""The Fourier-truncated orbit chart through a constant Hill potential, with its exact pulled-back form.

Chart ``F_x = theta + sum_n a_n cos n theta + b_n sin n theta``
(``x = (a_n1, b_n1, a_n2, b_n2, ...)``), point ``T(x) = Phi_{F_x} T0``, form
``omega_ij = int d_i T (d_j F / F') dtheta``. Rotations ``r_t(theta) = theta + t``
act on the orbit by the left coadjoint action ``Ad*_{r_t} = Phi_{r_{-t}}``, in
the chart ``(a_n, b_n) -> R(n t)(a_n, b_n)``; the moment map is
``mu(x) = int T(x) dtheta``. With ``delta_1 T = -X_rotation`` the identity
``iota_{delta_X T} omega = -dH_X`` becomes ``iota_{X_rot} omega = +d mu``:
declared as ``hamcheck.Convention(sign=+1, flow=+1)``.

>>> import hamcheck
>>> model = orbit_model(0.1, 1.0, [1, 2], grid=64)
>>> model.dim, base_form_check(model).passed
(4, True)
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np

from .. import circle
from .._jax import jax, jnp
from ..algebra import LieAlgebra
from ..errors import UsageError
from ..model import Convention, Model
from ..report import CheckResult, Finding, Report
from .diffeomorphisms import _as_periodic, _check_c, schwarzian_from_derivatives
from .tolerances import TOLERANCES

__all__ = [
    "orbit_model",
    "VirasoroOrbitChart",
    "kks_base_form",
    "base_form_residual",
    "base_form_check",
    "chart_resolution_study",
]

TWO_PI = 2.0 * np.pi


def _default_transform(T0F, F1, F2, F3, c):
    return T0F * F1**2 + 0.5 * c * schwarzian_from_derivatives(F1, F2, F3)


def _default_tangent(dF, F1):
    return dF / F1[:, None]


def _chart_bases(modes, th):
    n = np.asarray(modes, dtype=float)
    ph = np.outer(th, n)
    out = []
    for p in range(4):
        s = p * np.pi / 2
        cos_p = n**p * np.cos(ph + s)
        sin_p = n**p * np.sin(ph + s)
        out.append(np.stack([cos_p, sin_p], axis=2).reshape(th.size, 2 * n.size))
    return [jnp.asarray(b) for b in out]


#: The scan that fixes the sampled region: the 4 len(modes) vertices of the weighted l1 ball and
#: REGION_RAYS further fixed directions, each at REGION_RADII radii up to the amplitude.
REGION_RAYS = 64
REGION_RADII = 16
REGION_RESCANS = 3


def pfaffian(A) -> float:
    """The Pfaffian of an antisymmetric matrix by pivoted elimination (``Pf(A)^2 = det A``, from memory).

    >>> float(pfaffian(np.array([[0.0, 2.0], [-2.0, 0.0]])))
    2.0
    """
    A = np.array(A, dtype=float)
    n = A.shape[0]
    if n % 2:
        return 0.0
    pf = 1.0
    for k in range(0, n - 1, 2):
        p = k + 1 + int(np.argmax(np.abs(A[k + 1:, k])))
        if p != k + 1:  # swapping rows and columns k+1, p flips the sign
            A[[k + 1, p]] = A[[p, k + 1]]
            A[:, [k + 1, p]] = A[:, [p, k + 1]]
            pf = -pf
        if A[k, k + 1] == 0.0:
            return 0.0
        pf *= A[k, k + 1]
        if k + 2 < n:
            tau = A[k, k + 2:] / A[k, k + 1]
            col = A[k + 2:, k + 1].copy()
            A[k + 2:, k + 2:] += np.outer(tau, col) - np.outer(col, tau)
    return pf


def _region(form, modes, amplitude):
    """The sampled radius (weighted l1, ``sum n (|a_n| + |b_n|)``) and the radius where the scan found trouble.

    The pulled-back form of a finite slice need not be nondegenerate: its
    Pfaffian can cross zero inside the chart (it does for modes [1, 3] at
    T0 = 0.6, c = 2, where the base form pairs the two modes with opposite
    signs). Along the scanned rays, the first radius where
    ``Pf(omega(x)) / Pf(omega(0))`` falls to ``TOLERANCES.region_pfaffian`` or
    below bounds the region; the sampled radius is ``TOLERANCES.region_safety``
    times it. Returns ``(amplitude, None)`` when no ray falls within ``amplitude``.
    """
    dim = 2 * len(modes)
    nvec = np.repeat(np.asarray(modes, dtype=float), 2)
    W0 = np.asarray(form(jnp.zeros(dim)))
    s0 = np.linalg.svd(W0, compute_uv=False)
    if not np.all(np.isfinite(s0)) or s0[-1] <= TOLERANCES.resonance * s0[0]:
        return amplitude, None  # degenerate at the base point: the resonance warning says so
    base = pfaffian(W0)
    rng = np.random.default_rng(0)  # fixed directions: the same model every time
    dirs = np.vstack([np.diag(1.0 / nvec), -np.diag(1.0 / nvec), rng.standard_normal((REGION_RAYS, dim))])
    dirs /= np.sum(nvec * np.abs(dirs), axis=1, keepdims=True)
    frac = np.arange(1, REGION_RADII + 1) / REGION_RADII
    # the jitted form point by point: cheaper than compiling a vmapped copy for ~1000 points
    def forms(X):
        return np.stack([np.asarray(form(x)) for x in X])

    top = amplitude
    for _ in range(REGION_RESCANS + 1):
        pts = (top * frac)[None, :, None] * dirs[:, None, :]
        W = forms(pts.reshape(-1, dim))
        ratio = np.array([pfaffian(w) for w in W]).reshape(pts.shape[:2]) / base
        bad = ~(ratio > TOLERANCES.region_pfaffian)  # NaN counts as trouble
        if not bad.any():  # after a closer look: the trouble starts beyond `top`
            return (amplitude, None) if top == amplitude else (TOLERANCES.region_safety * top, top)
        first = top * frac[int(np.argmax(bad.any(axis=0)))]
        if first > top * frac[0]:
            return TOLERANCES.region_safety * first, first
        top = top * frac[0]  # trouble at the first radius: look closer
    raise UsageError(
        f"the chart's form for modes {list(modes)} degenerates within {top:.1e} of the base point (its Pfaffian "
        f"falls below {TOLERANCES.region_pfaffian} of the base value): no region to sample. Drop or change modes"
    )


def orbit_model(T0, c, modes, grid: int | None = None, *, amplitude: float = 0.4, transform=None, tangent=None, name=None) -> Model:
    """The Fourier-truncated orbit chart through ``T0`` with its exact pulled-back KKS form.

    Chart ``F_x = theta + sum_{n in modes} a_n cos n theta + b_n sin n theta``,
    ``x = (a_n1, b_n1, ...)``; point ``T(x) = Phi_{F_x} T0``; form
    ``omega_ij(x) = int d_i T(x) (d_j F_x / F_x') dtheta`` (trapezoid on ``grid``
    points, default ``max(64, 24 max(modes) + 8 deg T0)``: closedness
    residuals reach round-off near 24 x the highest mode at amplitude 0.4). For a constant T0 the
    rotations act (``(a_n, b_n) -> R(n t)(a_n, b_n)``) with moment map
    ``int T(x)``; convention ``Convention(sign=+1, flow=+1)`` (see module doc).

    A non-constant ``T0`` (number, samples, callable or Periodic) is allowed:
    rotations then do not preserve the chart, so the model carries the zero
    vector field and only antisymmetry, closedness and nondegeneracy are real
    checks (a warning says so).

    ``transform(T0F, F1, F2, F3, c)`` and ``tangent(dF, F1)`` (jax) replace the
    transformation law and the tangent map ``X_i = d_i F / F'``: the hooks for
    checking a user's own formulas.

    The sampled region is the weighted l1 ball ``sum n (|a_n| + |b_n|) <= radius``
    (so ``F' >= 1 - radius``), ``radius = amplitude`` unless the form degenerates
    inside it: the pulled-back form of a finite slice need not be nondegenerate
    (for modes [1, 3] at T0 = 0.6, c = 2 the Pfaffian changes sign at weighted
    radius ~0.37). A scan along the ball's vertices and 64 fixed rays, 16 radii
    each, finds the first radius where the Pfaffian falls to
    ``TOLERANCES.region_pfaffian`` of its base value; then ``radius`` is
    ``TOLERANCES.region_safety`` times that, with a warning, and it is recorded
    in ``model.construction.radius``. A form degenerate arbitrarily close to the
    base point is refused (``UsageError``).

    >>> import hamcheck
    >>> model = orbit_model(0.1, 1.0, [1, 2], grid=64)
    >>> hamcheck.check(model, points=4).passed
    True
    """
    c = _check_c(c)
    modes = [int(n) for n in np.atleast_1d(modes)]
    if not modes or any(n < 1 for n in modes) or len(set(modes)) != len(modes):
        raise UsageError(f"modes must be distinct positive integers; got {modes}")
    if not 0 < amplitude < 1:
        raise UsageError(f"amplitude must lie in (0, 1) so that F' > 0 on the chart; got {amplitude}")
    p = _as_periodic(T0, "T0")
    constant = p.degree == 0
    T0c = float(np.real(p.coefficients[p.wavenumbers == 0].sum())) if constant else None
    M = int(grid) if grid is not None else max(64, 24 * max(modes) + 8 * p.degree)
    if M <= 2 * max(modes):
        raise UsageError(f"grid = {M} cannot resolve mode {max(modes)}; expected grid > {2 * max(modes)} (16x is advised)")
    if constant:
        for n in modes:
            if abs(T0c - c * n * n / 4) <= TOLERANCES.resonance * max(abs(T0c), abs(c) * n * n / 4):
                warnings.warn(
                    f"mode n={n} has T0 = c n^2/4 = {T0c:g}: the KKS form is degenerate at the base point "
                    f"(delta_X T0 = 0 for X = cos {n} theta, sin {n} theta). Drop mode {n} from modes"
                    + (" (at the sl2 point T0 = c/4 start the chart at n = 2)" if n == 1 else ""),
                    stacklevel=2,
                )
    else:
        warnings.warn(
            "non-constant base potential: rotations do not preserve the chart, so the model carries the zero "
            "vector field; only antisymmetry, closedness and nondegeneracy are real checks",
            stacklevel=2,
        )
    phi = transform or _default_transform
    tang = tangent or _default_tangent
    th = circle.grid(M)
    th_j = jnp.asarray(th)
    D0, D1, D2, D3 = _chart_bases(modes, th)
    dim = 2 * len(modes)
    w = TWO_PI / M
    nvec = np.repeat(np.asarray(modes, dtype=float), 2)

    def point(x):
        F = th_j + D0 @ x
        F1, F2, F3 = 1.0 + D1 @ x, D2 @ x, D3 @ x
        T0F = jnp.full_like(F, T0c) if constant else p(F)
        return phi(T0F, F1, F2, F3, c), F1

    # jitted so that eager calls (declaration, base-point comparisons) compile once;
    # inside hamcheck.check's own jit they are simply inlined
    @jax.jit
    def form(x):
        J = jax.jacfwd(lambda y: point(y)[0])(x)
        F1 = 1.0 + D1 @ x
        X = tang(D0, F1)
        return w * (J.T @ X)

    if constant:
        algebra = LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])], names=["rotation"])

        @jax.jit
        def moment(x):
            return jnp.reshape(w * jnp.sum(point(x)[0]), (1,))

        def fields(x):
            a, b = x[0::2], x[1::2]
            n = jnp.asarray(modes, dtype=jnp.float64)
            return jnp.stack([-n * b, n * a], axis=1).reshape(1, dim)

        def action(g, x):
            pairs = x.reshape(len(modes), 2)
            powers, gp = {}, jnp.eye(2, dtype=g.dtype)
            for k in range(1, max(modes) + 1):
                gp = gp @ g
                powers[k] = gp
            return jnp.concatenate([powers[n] @ pairs[i] for i, n in enumerate(modes)])

        extra = {"vector_fields": fields, "action": action}
    else:
        algebra = LieAlgebra.from_structure_constants(np.zeros((1, 1, 1)), names=["none"])

        def moment(x):
            return jnp.zeros((1,))

        extra = {"vector_fields": lambda x: jnp.zeros((1, dim))}

    radius, trouble = _region(form, modes, amplitude)
    if trouble is not None:
        warnings.warn(
            f"the chart's form for modes {modes} degenerates near weighted radius sum n (|a_n| + |b_n|) = "
            f"{trouble:.3g} (its Pfaffian falls below {TOLERANCES.region_pfaffian} of the base value): points are "
            f"sampled within {radius:.3g} instead of amplitude {amplitude:g}",
            stacklevel=2,
        )

    def sample(rng):
        x = rng.standard_normal(dim)
        return radius * rng.uniform(0.2, 1.0) * x / np.sum(nvec * np.abs(x))

    label = name or f"virasoro_orbit(T0={'%g' % T0c if constant else 'non-constant'}, c={c:g}, modes={modes}, M={M})"
    built = VirasoroOrbitChart(T0=T0c if constant else p, c=c, modes=tuple(modes), grid=M, point=point, radius=radius)
    return Model(label, dim, form, algebra, moment, sample=sample, convention=Convention(sign=+1, flow=+1),
                 construction=built, **extra)


@dataclass(frozen=True)
class VirasoroOrbitChart:
    """What :func:`orbit_model` built: base potential ``T0`` (a number or a
    :class:`~hamcheck.circle.Periodic`), central charge, modes, quadrature grid, ``point``, and the sampled
    ``radius`` (weighted l1: ``sum n (|a_n| + |b_n|) <= radius``)."""

    T0: object
    c: float
    modes: tuple
    grid: int
    point: object = field(repr=False, compare=False, default=None)
    radius: float | None = None


def kks_base_form(T0, c, modes) -> np.ndarray:
    """The closed formula for omega at the base point in chart coordinates.

    ``omega(d/da_n, d/db_n) = pi n (c n^2 - 4 T0) / 2``, different n do not pair
    (equivalently ``omega(cos n, sin n) = 2 pi / (n (c n^2 - 4 T0))`` for
    tangent vectors; docs/references.md, Virasoro).
    """
    modes = [int(n) for n in np.atleast_1d(modes)]
    W = np.zeros((2 * len(modes), 2 * len(modes)))
    for i, n in enumerate(modes):
        v = np.pi * n * (c * n * n - 4 * T0) / 2
        W[2 * i, 2 * i + 1], W[2 * i + 1, 2 * i] = v, -v
    return W


def base_form_residual(model: Model) -> float:
    """Relative difference between the model's form at x = 0 and :func:`kks_base_form`."""
    return _base_form(model)[0]


def _base_form(model: Model):
    info = model.construction
    if not isinstance(info, VirasoroOrbitChart) or isinstance(info.T0, circle.Periodic):
        raise UsageError("base_form_residual needs a model from orbit_model with a constant T0")
    W = np.asarray(model.form(jnp.zeros(model.dim)))
    ref = kks_base_form(info.T0, info.c, info.modes)
    return float(np.abs(W - ref).max() / max(np.abs(ref).max(), 1e-300)), W, info


def _fitted_charge(W, info):
    """Least-squares ``(c', T0')`` with ``omega(d/da_n, d/db_n) = pi n (c' n^2 - 4 T0')/2`` (two modes or more)."""
    n = np.asarray(info.modes, dtype=float)
    if n.size < 2:
        return None
    A = np.stack([np.pi * n**3 / 2, -2 * np.pi * n], axis=1)
    y = np.array([W[2 * i, 2 * i + 1] for i in range(n.size)])
    sol, *_ = np.linalg.lstsq(A, y, rcond=None)
    misfit = float(np.abs(A @ sol - y).max() / max(np.abs(y).max(), 1e-300))
    return float(sol[0]), float(sol[1]), misfit


def base_form_check(model: Model) -> Report:
    """Named check ``kks_base_form``: the form at x = 0 equals :func:`kks_base_form`; a :class:`hamcheck.Report`.

    Catches what closedness cannot: a consistently wrong Schwarzian
    coefficient or sign of c gives another valid orbit (closed, invariant,
    with a moment map) but the wrong form. With two modes or more a failure
    comes with a ``central-cocycle`` finding: the central charge the chart's
    form belongs to, and its ratio to ``c`` (1/6 for ``c/12`` in front of
    ``S(F)`` where ``c/2`` is meant).

    >>> import hamcheck
    >>> base_form_check(orbit_model(0.1, 1.0, [1, 2], grid=64)).passed
    True
    """
    r, W, info = _base_form(model)
    failed = not (r <= TOLERANCES.base_form)
    replay = f"hamcheck.virasoro.base_form_check(model)  # {model.name}" + (f" from {model.source}" if model.source else "")
    msg = (
        f"omega at T0 differs from pi n (c n^2 - 4 T0)/2 by {r:.1e} (relative): the chart uses another central "
        "charge or coefficient (check the c/2 in front of S(F) and the sign of c)"
        if failed
        else f"omega at T0 = {info.T0:g} matches the mode formula for modes {list(info.modes)}"
    )
    result = CheckResult(
        "kks_base_form", "fail" if failed else "pass", r, TOLERANCES.base_form, tuple(0.0 for _ in range(model.dim)),
        msg, 1, statement="omega(d/da_n, d/db_n) = pi n (c n^2 - 4 T0)/2 at the base point, other pairings 0",
        replay=replay,
    )
    findings = []
    fit = _fitted_charge(W, info) if failed else None
    if fit is not None and fit[2] <= TOLERANCES.base_form:
        ratio = fit[0] / info.c
        findings.append(Finding(
            "central-cocycle",
            f"the chart's form at the base point is the orbit form of central charge {fit[0]:.10g} = {ratio:.6g} x c "
            f"(T0 {fit[1]:.10g}): the central term is off by the factor {ratio:.6g} (1/6 when c/12 S(F) is used "
            "where c/2 S(F) is meant); rescale the Schwarzian term or restate c",
            {"ratio": ratio, "central_charge": fit[0], "T0": fit[1], "misfit": fit[2]}, "kks_base_form", replay,
        ))
    return Report(model=model.name, source=model.source, seed=0, points=1, derivatives="none (the form at x = 0)",
                  results={"kks_base_form": result}, findings=tuple(findings))


def chart_resolution_study(T0, c, modes, grids, *, check: str = "closed", points: int = 4, seed: int = 0, transform=None, tangent=None):
    """Residual of one check of :func:`orbit_model` against the quadrature grid, with a fitted decay.

    Real :func:`hamcheck.check` runs through :func:`hamcheck.circle.check_resolution_study`;
    returns the :class:`hamcheck.circle.ResolutionStudy` of ``check``. A residual
    that does not fall is reported (verdict ``stalls``) as a failure of the
    construction, not of the truncation.
    """
    def build(M):
        return orbit_model(T0, c, modes, grid=M, transform=transform, tangent=tangent)

    return circle.check_resolution_study(build, grids, checks=(check,), points=points, seed=seed).studies[check]
