"""Periodic functions on the circle R/2piZ: grids, Fourier modes, quadrature, resolution studies.

Shared by :mod:`hamcheck.virasoro` and :mod:`hamcheck.affine`. Everything works
on arrays whose *axis 0* runs over the uniform grid ``theta_j = 2 pi j / M``
(``j = 0..M-1``); trailing axes are carried along, so a matrix-valued loop is an
array of shape ``(M, n, n)``. Functions marked (jax) accept jax arrays and
tracers (then they use ``jax.numpy`` and can be jitted and differentiated) and
use plain numpy on numpy input (no compilation); the rest are numpy.

Conventions
-----------
* Fourier series ``f(theta) = sum_k fhat_k e^{i k theta}``; ``fhat_k`` are
  the *normalised* coefficients ``(1/M) sum_j f_j e^{-i k theta_j}`` (numpy's
  ``fft`` divided by ``M``). For even ``M`` the Nyquist coefficient is split
  evenly between ``k = +-M/2`` so the interpolant of real samples is real.
* Real modes ``f = a_0 + sum_n (a_n cos n theta + b_n sin n theta)``.
* Quadrature: trapezoid rule ``int_0^{2pi} f dtheta ~ (2pi/M) sum_j f_j``, exact
  for trigonometric polynomials of degree < M and spectrally accurate for
  smooth periodic functions.

API
---
grid(M)                                   theta_j (numpy)
wavenumbers(M)                            integer k in FFT order (numpy)
integrate(f) (jax)                        trapezoid integral over axis 0
mean(f) (jax)                             integrate(f) / 2pi
derivative(f, order=1) (jax)              spectral derivative along axis 0 (real or complex)
real_modes(theta, modes, a, b, order=0) (jax)  sum_n a_n cos + b_n sin (and exact derivatives)
mode_vector_to_samples(v, M)              real mode vector [a0, a1, b1, a2, b2, ...] -> samples (jax)
samples_to_mode_vector(f, K)              samples -> real mode vector up to mode K (numpy)
resample(f, M_new)                        zero-padded (or truncated) trigonometric interpolant
spectral_tail(f)                          relative size of the top third of the spectrum (resolution)
Periodic                                  trigonometric polynomial: from_samples / from_function /
                                          from_real_modes; evaluate anywhere (jax or numpy) with exact
                                          derivatives; on_grid(N, shift) exact by FFT; real_coefficients
load_periodic_samples(path, name, ...)    samples on a uniform grid from .npy / .csv / .py
resolution_study(fn, resolutions, ...)    residual vs resolution, fitted decay, table, PNG plot
fit_decay(resolutions, residuals)         geometric and algebraic least-squares fits

Example
-------
>>> import numpy as np
>>> from hamcheck import circle
>>> th = circle.grid(32)
>>> f = np.sin(3 * th)
>>> np.allclose(circle.derivative(f), 3 * np.cos(3 * th))
True
>>> round(float(circle.integrate(f**2)), 12) == round(np.pi, 12)
True
"""

from __future__ import annotations

import math
import os
import runpy
from dataclasses import dataclass

import numpy as np

from ._jax import jax, jnp
from .errors import UsageError

__all__ = [
    "grid",
    "wavenumbers",
    "integrate",
    "mean",
    "derivative",
    "real_modes",
    "resample",
    "mode_vector_to_samples",
    "samples_to_mode_vector",
    "vector_modes",
    "spectral_tail",
    "Periodic",
    "LoadedSamples",
    "load_periodic_samples",
    "ResolutionStudy",
    "resolution_study",
    "fit_decay",
    "ROUND_OFF_FLOOR",
    "STALL_FACTOR",
]

TWO_PI = 2.0 * np.pi

#: Residuals below this are treated as round-off in resolution studies: float64
#: identities built from sums of O(M) terms bottom out at 1e-16..1e-14.
ROUND_OFF_FLOOR = 1e-13

#: A resolution study whose residual falls by less than this factor from the
#: coarsest to the finest resolution (while above round-off) "stalls": the
#: construction is wrong, not the truncation. A converging spectral method
#: gains orders of magnitude over a doubling; 0.5 leaves room for the
#: pre-asymptotic regime of algebraic decay.
STALL_FACTOR = 0.5

# ------------------------------------------------------------------ grids
def grid(M: int) -> np.ndarray:
    """The uniform grid ``theta_j = 2 pi j / M``, ``j = 0..M-1``."""
    M = _positive_int(M, "M")
    return TWO_PI * np.arange(M) / M


def wavenumbers(M: int) -> np.ndarray:
    """Integer wave numbers in FFT order: ``0, 1, ..., -2, -1``."""
    M = _positive_int(M, "M")
    return np.rint(np.fft.fftfreq(M, 1.0 / M)).astype(int)


def _positive_int(M, what):
    if isinstance(M, bool) or not isinstance(M, (int, np.integer)) or M < 1:
        raise UsageError(f"{what} must be a positive integer; got {M!r}")
    return int(M)


def _xp(*arrays):
    """jax.numpy for jax arrays and tracers (differentiable), numpy otherwise (no compilation)."""
    return jnp if any(isinstance(a, jax.Array) for a in arrays) else np


def integrate(f):
    """Trapezoid rule over axis 0: ``(2pi/M) sum_j f_j`` (jax)."""
    xp = _xp(f)
    f = xp.asarray(f)
    return (TWO_PI / f.shape[0]) * xp.sum(f, axis=0)


def mean(f):
    """Average over the circle along axis 0 (jax)."""
    xp = _xp(f)
    return xp.mean(xp.asarray(f), axis=0)


def _multiplier(M, order, ndim, xp=jnp):
    k = wavenumbers(M).astype(float)
    mult = (1j * k) ** order
    if order % 2 == 1 and M % 2 == 0:
        # the Nyquist mode's derivative is ambiguous; zero keeps real data real
        mult[M // 2] = 0.0
    return xp.asarray(mult.reshape((M,) + (1,) * (ndim - 1)))


def derivative(f, order: int = 1):
    """Spectral derivative of periodic samples along axis 0 (jax; real stays real).

    Exact for trigonometric polynomials of degree < M/2; spectrally accurate
    for smooth periodic functions.
    """
    if isinstance(order, bool) or not isinstance(order, (int, np.integer)) or order < 0:
        raise UsageError(f"derivative order must be a non-negative integer; got {order!r}")
    xp = _xp(f)
    f = xp.asarray(f)
    if order == 0:
        return f
    M = f.shape[0]
    fh = xp.fft.fft(f, axis=0) * _multiplier(M, order, f.ndim, xp)
    out = xp.fft.ifft(fh, axis=0)
    return out if xp.iscomplexobj(f) else xp.real(out)


def real_modes(theta, modes, a, b, order: int = 0):
    """``sum_n a_n cos(n theta) + b_n sin(n theta)`` or its ``order``-th derivative (jax, exact).

    ``theta`` has shape (M,), ``modes``/``a``/``b`` shape (K,); returns (M,).
    Include ``0`` in ``modes`` for a constant term (its ``b`` is ignored).
    """
    n = jnp.asarray(modes, dtype=jnp.float64)
    ph = jnp.outer(jnp.asarray(theta), n)
    # d^p/dtheta^p cos(n t) = n^p cos(n t + p pi/2), same for sin
    shift = order * np.pi / 2
    scale = n**order
    return jnp.cos(ph + shift) @ (scale * jnp.asarray(a)) + jnp.sin(ph + shift) @ (scale * jnp.asarray(b))


def vector_modes(K: int) -> np.ndarray:
    """|wave number| of each entry of a real mode vector ``[a0, a1, b1, ..., aK, bK]``."""
    return np.concatenate([[0], np.repeat(np.arange(1, K + 1), 2)]).astype(int)


def mode_vector_to_samples(v, M: int):
    """Samples on M grid points of ``a0 + sum_n a_n cos n theta + b_n sin n theta`` (jax).

    ``v = [a0, a1, b1, ..., aK, bK]`` along axis 0 (trailing axes carried,
    e.g. a (2K+1, 3) array for an su(2)-valued loop in a basis e_1..e_3).
    """
    xp = _xp(v)
    v = xp.asarray(v)
    K = (v.shape[0] - 1) // 2
    th = grid(M)
    n = np.arange(1, K + 1, dtype=float)
    basis = np.concatenate(
        [np.ones((M, 1)), np.stack([np.cos(np.outer(th, n)), np.sin(np.outer(th, n))], axis=2).reshape(M, 2 * K)],
        axis=1,
    )
    return xp.tensordot(xp.asarray(basis), v, axes=1)


def samples_to_mode_vector(f, K: int) -> np.ndarray:
    """Real mode vector ``[a0, a1, b1, ..., aK, bK]`` of samples (exact if M > 2K; numpy)."""
    f = np.asarray(f)
    M = f.shape[0]
    if M <= 2 * K:
        raise UsageError(f"{M} samples cannot resolve modes up to {K}; expected more than {2 * K} samples")
    fh = np.fft.fft(f, axis=0) / M
    out = np.empty((2 * K + 1,) + f.shape[1:], dtype=float)
    out[0] = np.real(fh[0])
    for n in range(1, K + 1):
        out[2 * n - 1] = np.real(fh[n] + fh[-n])
        out[2 * n] = np.real(1j * (fh[n] - fh[-n]))
    return out


def resample(f, M_new: int) -> np.ndarray:
    """Samples of the trigonometric interpolant of ``f`` on a grid of ``M_new`` points (numpy)."""
    return Periodic.from_samples(f).on_grid(_positive_int(M_new, "M_new"))


def spectral_tail(f) -> float:
    """Largest coefficient among the top third of wave numbers over the largest overall.

    Near round-off (1e-14) the samples resolve the function; above 1e-8 the
    grid is too coarse and spectral results lose digits.
    """
    p = Periodic.from_samples(f)
    mag = np.abs(p.coefficients).reshape(p.coefficients.shape[0], -1).max(axis=1)
    kabs = np.abs(p.wavenumbers)
    top = kabs > (2 * kabs.max()) // 3
    if not top.any() or mag.max() == 0:
        return 0.0
    return float(mag[top].max() / mag.max())


#: Spectral tail above which samples count as under-resolved (see :func:`spectral_tail`).
UNDERRESOLVED_TAIL = 1e-8


def resolution_warning(f, name: str):
    """``(tail, warning or None)`` for samples of the periodic function called ``name``."""
    tail = spectral_tail(f)
    if tail <= UNDERRESOLVED_TAIL:
        return tail, None
    return tail, (
        f"the samples are under-resolved (top third of the spectrum is {tail:.1e} of the largest mode): the "
        f"invariants are those of the trigonometric interpolant; sample {name} on a finer grid"
    )


# ------------------------------------------------------- trig polynomials
@dataclass(frozen=True)
class Periodic:
    """A trigonometric polynomial ``f(theta) = sum_k fhat_k e^{i k theta}`` (values of any shape).

    ``coefficients`` has shape ``(K,) + value_shape`` (complex), indexed by
    ``wavenumbers`` (K,). ``real`` marks a real-valued function (imaginary
    parts of evaluations are dropped).

    >>> import numpy as np
    >>> p = Periodic.from_real_modes([1, 2], a=[0.5, 0.0], b=[0.0, 1.0])
    >>> bool(np.isclose(p(np.array([0.3]))[0], 0.5 * np.cos(0.3) + np.sin(0.6), rtol=1e-14))
    True
    """

    coefficients: np.ndarray
    wavenumbers: np.ndarray
    real: bool = True

    # builders
    @classmethod
    def from_samples(cls, samples) -> "Periodic":
        """The interpolant of samples on the uniform grid (axis 0), Nyquist split evenly."""
        f = np.asarray(samples)
        if f.ndim == 0 or f.shape[0] < 1:
            raise UsageError(f"periodic samples need a grid axis (axis 0); got shape {f.shape}")
        if not np.all(np.isfinite(f)):
            raise UsageError("periodic samples contain NaN or inf; expected finite values on the grid")
        M = f.shape[0]
        fh = np.fft.fft(f, axis=0) / M
        k = wavenumbers(M)
        if M % 2 == 0:
            ny = fh[M // 2] / 2
            fh = np.concatenate([fh[: M // 2], ny[None], fh[M // 2 + 1 :], ny[None]], axis=0)
            k = np.concatenate([k[: M // 2], [-(M // 2)], k[M // 2 + 1 :], [M // 2]])
        return cls(fh, k, not np.iscomplexobj(f))

    @classmethod
    def from_function(cls, fn, M: int) -> "Periodic":
        """Interpolant of ``fn(theta)`` (vectorised over a (M,) array) on M grid points."""
        th = grid(M)
        return cls.from_samples(np.asarray(fn(th)))

    @classmethod
    def from_real_modes(cls, modes, a, b, a0: float = 0.0) -> "Periodic":
        """``a0 + sum_n a_n cos n theta + b_n sin n theta`` (scalar-valued, exact)."""
        modes = np.asarray(modes, dtype=int)
        a = np.asarray(a, dtype=float)
        b = np.asarray(b, dtype=float)
        if modes.ndim != 1 or a.shape != modes.shape or b.shape != modes.shape or np.any(modes < 1):
            raise UsageError(
                f"from_real_modes needs positive integer modes and a, b of the same length; got modes "
                f"{modes.tolist()}, a shape {a.shape}, b shape {b.shape}"
            )
        k = np.concatenate([[0], modes, -modes])
        co = np.concatenate([[a0], (a - 1j * b) / 2, (a + 1j * b) / 2]).astype(complex)
        return cls(co, k, True)

    # properties
    @property
    def degree(self) -> int:
        return int(np.max(np.abs(self.wavenumbers)))

    @property
    def value_shape(self) -> tuple:
        return tuple(self.coefficients.shape[1:])

    def real_coefficients(self):
        """``(a0, a, b)`` with ``a[n-1], b[n-1]`` the cos/sin coefficients of mode n = 1..degree."""
        d = self.degree
        a0 = np.zeros(self.value_shape, dtype=self.coefficients.dtype)
        plus = np.zeros((d,) + self.value_shape, dtype=complex)
        minus = np.zeros((d,) + self.value_shape, dtype=complex)
        for kk, ck in zip(self.wavenumbers, self.coefficients):
            if kk == 0:
                a0 = a0 + ck
            elif kk > 0:
                plus[kk - 1] += ck
            else:
                minus[-kk - 1] += ck
        a = plus + minus
        b = 1j * (plus - minus)
        if self.real:
            return np.real(a0), np.real(a), np.real(b)
        return a0, a, b

    # evaluation
    def __call__(self, theta, derivative: int = 0):
        """Values (or the ``derivative``-th derivative) at arbitrary points ``theta`` (1-d).

        Uses ``jax.numpy`` when ``theta`` is a jax array or tracer (so it can be
        differentiated inside a model), numpy otherwise. Cost O(len(theta) K).
        """
        xp = jnp if isinstance(theta, jax.Array) else np
        th = xp.asarray(theta)
        flat = th.reshape(-1)
        k = self.wavenumbers.astype(float)
        co = self.coefficients.reshape(self.coefficients.shape[0], -1) * ((1j * k) ** derivative)[:, None]
        E = xp.exp(1j * xp.outer(flat, xp.asarray(k)))
        vals = E @ xp.asarray(co)
        vals = xp.real(vals) if self.real else vals
        return vals.reshape(th.shape + self.value_shape)

    def on_grid(self, N: int, shift: float = 0.0) -> np.ndarray:
        """Exact values at ``2 pi j / N + shift`` (j < N) by one FFT (numpy).

        Falls back to direct summation when ``N`` is too small to hold every
        wave number without folding.
        """
        N = _positive_int(N, "N")
        if N <= 2 * self.degree:
            return self(grid(N) + shift)
        co = self.coefficients * np.exp(1j * self.wavenumbers * shift).reshape((-1,) + (1,) * len(self.value_shape))
        buf = np.zeros((N,) + self.value_shape, dtype=complex)
        np.add.at(buf, self.wavenumbers % N, co)
        vals = np.fft.ifft(buf, axis=0) * N
        return np.real(vals) if self.real else vals

    def trimmed(self, rtol: float = 1e-14) -> "Periodic":
        """Drop coefficients below ``rtol`` x the largest one (FFT round-off of exact samples).

        Such coefficients change values by less than round-off, but they would
        set the degree (and the cost of everything sized by it).
        """
        mag = np.abs(self.coefficients).reshape(self.coefficients.shape[0], -1).max(axis=1)
        keep = mag > rtol * max(mag.max(), np.finfo(float).tiny)
        keep |= self.wavenumbers == 0
        return Periodic(self.coefficients[keep], self.wavenumbers[keep], self.real)

    def derivative(self, order: int = 1) -> "Periodic":
        k = self.wavenumbers.astype(float)
        mult = ((1j * k) ** order).reshape((-1,) + (1,) * len(self.value_shape))
        return Periodic(self.coefficients * mult, self.wavenumbers, self.real)

    def integral(self):
        """``int_0^{2pi} f dtheta`` (exact)."""
        return TWO_PI * np.real_if_close(self.coefficients[self.wavenumbers == 0].sum(axis=0))


# ------------------------------------------------------------- file input
@dataclass(frozen=True)
class LoadedSamples:
    """Samples of a periodic quantity read from a file.

    ``values`` has shape ``(M,) + value_shape`` on ``theta_j = 2 pi j / M``;
    ``params`` holds the extra scalars found in a .py file (e.g. ``c``);
    ``function`` is the callable when the file defined one.
    """

    values: np.ndarray
    source: str
    kind: str  # "npy", "csv", "py-array", "py-callable"
    params: dict
    function: object = None

    @property
    def M(self) -> int:
        return int(self.values.shape[0])


def load_periodic_samples(path, name: str = "T", *, params=("c",), value_shape=None, M: int = 512) -> LoadedSamples:
    """Read samples of a periodic quantity on a uniform grid.

    * ``.npy``: an array whose axis 0 runs over ``theta_j = 2 pi j / M``.
    * ``.csv``: one row per grid point (commas or whitespace; a non-numeric
      header line is skipped); one column gives shape (M,), k columns (M, k).
    * ``.py``: a file defining ``name`` as an array of samples or a callable of
      theta (vectorised over a numpy array, or called point by point), plus the
      scalars listed in ``params`` when present. A callable is sampled on ``M``
      points.

    ``value_shape`` (e.g. ``(2, 2)``) reshapes each row; a mismatch raises
    :class:`~hamcheck.UsageError` naming the expected shape.

    >>> import tempfile, numpy as np, os
    >>> p = os.path.join(tempfile.mkdtemp(), "t.npy"); np.save(p, np.ones(8))
    >>> load_periodic_samples(p).values.shape
    (8,)
    """
    path = os.fspath(path)
    if not os.path.exists(path):
        raise UsageError(f"no such file: {path}; expected a .npy, .csv or .py file with samples of {name}")
    ext = os.path.splitext(path)[1].lower()
    found = {}
    fn = None
    if ext == ".npy":
        try:
            vals = np.load(path, allow_pickle=False)
        except Exception as exc:
            raise UsageError(f"could not read {path} as a numpy .npy array ({type(exc).__name__}: {exc})") from None
        kind = "npy"
    elif ext in (".csv", ".txt"):
        vals = _read_csv(path)
        kind = "csv"
    elif ext == ".py":
        try:
            ns = runpy.run_path(path)
        except Exception as exc:
            raise UsageError(f"running {path} raised {type(exc).__name__}: {exc}") from None
        if name not in ns:
            raise UsageError(f"{path} does not define {name!r}; expected {name} = <array of samples> or a function of theta")
        obj = ns[name]
        for p in params:
            if p in ns:
                try:
                    found[p] = float(ns[p])
                except (TypeError, ValueError):
                    raise UsageError(f"{path}: {p} = {ns[p]!r} is not a number") from None
        if callable(obj):
            fn = obj
            vals = _sample_callable(obj, _positive_int(M, "M"), name, path)
            kind = "py-callable"
        else:
            vals = np.asarray(obj)
            kind = "py-array"
    else:
        raise UsageError(f"unsupported file type {ext or '(none)'} for {path}; expected .npy, .csv or .py")
    vals = np.asarray(vals)
    if not np.issubdtype(vals.dtype, np.number):
        raise UsageError(f"{path}: samples of {name} must be numbers; got dtype {vals.dtype}")
    if vals.ndim == 0 or vals.shape[0] < 3:
        raise UsageError(f"{path}: expected at least 3 samples of {name} along axis 0; got shape {vals.shape}")
    if value_shape is not None:
        value_shape = tuple(value_shape)
        size = int(np.prod(value_shape)) if value_shape else 1
        if int(np.prod(vals.shape[1:])) != size:
            raise UsageError(
                f"{path}: each sample of {name} should have shape {value_shape}; got {vals.shape[1:]} "
                f"(array shape {vals.shape})"
            )
        vals = vals.reshape((vals.shape[0],) + value_shape)
    if not np.all(np.isfinite(vals)):
        bad = int(np.flatnonzero(~np.isfinite(vals.reshape(vals.shape[0], -1)).any(axis=1))[0])
        raise UsageError(f"{path}: sample {bad} of {name} is NaN or inf; expected finite values")
    vals = vals.astype(np.complex128 if np.iscomplexobj(vals) else np.float64)
    return LoadedSamples(vals, path, kind, found, fn)


def _read_csv(path):
    rows = []
    with open(path, encoding="utf-8") as fh:
        for lineno, line in enumerate(fh, 1):
            s = line.strip()
            if not s or s.startswith("#"):
                continue
            parts = [p for p in s.replace(",", " ").split() if p]
            try:
                rows.append([float(p) for p in parts])
            except ValueError:
                if not rows:
                    continue  # header line
                raise UsageError(f"{path}:{lineno}: could not read numbers from {s[:60]!r}") from None
    if not rows:
        raise UsageError(f"{path} holds no numeric rows; expected one sample per line")
    widths = {len(r) for r in rows}
    if len(widths) != 1:
        raise UsageError(f"{path}: rows have different numbers of columns {sorted(widths)}; expected the same in every row")
    arr = np.asarray(rows, dtype=float)
    if arr.shape[1] == 1:
        return arr[:, 0]
    if arr.shape[0] == 1:
        return arr[0]
    return arr


def _sample_callable(fn, M, name, path):
    th = grid(M)
    try:
        vals = np.asarray(fn(th))
        if vals.shape[:1] == (M,):
            return vals
    except Exception:
        pass
    try:
        return np.stack([np.asarray(fn(float(t))) for t in th])
    except Exception as exc:
        raise UsageError(f"{path}: calling {name}(theta) raised {type(exc).__name__}: {exc}") from None


# ------------------------------------------------------- resolution studies
def fit_decay(resolutions, residuals) -> dict:
    """Least-squares fits of ``log r`` against ``n`` (geometric) and ``log n`` (algebraic).

    Points at round-off (below :data:`ROUND_OFF_FLOOR`) are left out. Returns
    ``{"geometric": {"rate", "misfit"}, "algebraic": {"power", "misfit"}, "best"}``
    with ``r ~ A rate^n`` and ``r ~ A n^-power``; ``best`` is the smaller misfit.
    """
    n = np.asarray(resolutions, dtype=float)
    r = np.asarray(residuals, dtype=float)
    keep = np.isfinite(r) & (r > ROUND_OFF_FLOOR)
    out = {"geometric": None, "algebraic": None, "best": None, "points": int(keep.sum())}
    if keep.sum() < 2:
        return out
    x, y = n[keep], np.log(r[keep])
    for kind, xs in (("geometric", x), ("algebraic", np.log(x))):
        A = np.stack([np.ones_like(xs), xs], axis=1)
        coef, *_ = np.linalg.lstsq(A, y, rcond=None)
        misfit = float(np.sqrt(np.mean((A @ coef - y) ** 2)))
        if kind == "geometric":
            out[kind] = {"rate": float(np.exp(coef[1])), "misfit": misfit}
        else:
            out[kind] = {"power": float(-coef[1]), "misfit": misfit}
    out["best"] = "geometric" if out["geometric"]["misfit"] <= out["algebraic"]["misfit"] else "algebraic"
    return out


@dataclass(frozen=True)
class ResolutionStudy:
    """Residual against resolution with a fitted decay and a verdict.

    ``verdict`` is one of ``"round-off"`` (already at round-off),
    ``"converges"`` (falls to round-off or by more than ``1/STALL_FACTOR``),
    ``"stalls"`` (does not fall: a failure of the construction, not of the
    truncation).
    """

    label: str
    resolutions: tuple
    residuals: tuple
    fit: dict
    verdict: str
    message: str

    def table(self) -> str:
        lines = [f"{self.label:>12}  {'residual':>10}  {'ratio':>8}"]
        prev = None
        for n, r in zip(self.resolutions, self.residuals):
            ratio = "" if prev is None or prev == 0 else f"{r / prev:8.2e}"
            lines.append(f"{n:>12}  {r:10.2e}  {ratio:>8}")
            prev = r
        g, a = self.fit.get("geometric"), self.fit.get("algebraic")
        if g:
            lines.append(f"geometric fit: r ~ {g['rate']:.3g}^n (log misfit {g['misfit']:.2f})")
        if a:
            lines.append(f"algebraic fit: r ~ n^-{a['power']:.3g} (log misfit {a['misfit']:.2f})")
        lines.append(f"verdict: {self.verdict}: {self.message}")
        return "\n".join(lines)

    __str__ = table

    def to_dict(self) -> dict:
        return {
            "label": self.label,
            "resolutions": list(self.resolutions),
            "residuals": [float(r) for r in self.residuals],
            "fit": self.fit,
            "verdict": self.verdict,
            "message": self.message,
        }

    def plot(self, path, title: str | None = None) -> str:
        """Write a semilog PNG of residual against resolution (needs matplotlib)."""
        try:
            import matplotlib

            matplotlib.use("Agg")
            import matplotlib.pyplot as plt
        except ImportError:
            raise UsageError("plotting needs matplotlib: pip install 'hamcheck[plots]'") from None
        fig, ax = plt.subplots(figsize=(5, 3.5))
        r = np.maximum(np.asarray(self.residuals, dtype=float), 1e-17)
        ax.semilogy(self.resolutions, r, "o-", label="residual")
        ax.axhline(ROUND_OFF_FLOOR, color="gray", ls=":", label="round-off floor")
        ax.set_xlabel(self.label)
        ax.set_ylabel("relative residual")
        ax.set_title(title or f"{self.verdict}")
        ax.legend()
        fig.tight_layout()
        fig.savefig(path, dpi=100)
        plt.close(fig)
        return os.fspath(path)


def resolution_study(fn, resolutions, label: str = "resolution") -> ResolutionStudy:
    """Run ``fn(n) -> residual`` for each resolution and judge the decay.

    >>> s = resolution_study(lambda n: 10.0 ** -n, [2, 4, 6, 8])
    >>> s.verdict, round(s.fit["geometric"]["rate"], 6)
    ('converges', 0.1)
    """
    res = [int(n) for n in resolutions]
    if len(res) < 2:
        raise UsageError(f"a resolution study needs at least two resolutions; got {res}")
    if sorted(res) != res or len(set(res)) != len(res):
        raise UsageError(f"resolutions must be strictly increasing; got {res}")
    vals = tuple(float(fn(n)) for n in res)
    fit = fit_decay(res, vals)
    first, last = vals[0], vals[-1]
    if not all(math.isfinite(v) for v in vals):
        verdict, msg = "stalls", "non-finite residuals: the construction breaks, not the truncation"
    elif max(vals) <= ROUND_OFF_FLOOR:
        verdict, msg = "round-off", "at round-off at every resolution"
    elif last <= ROUND_OFF_FLOOR or last <= STALL_FACTOR * first:
        best = fit.get("best")
        how = ""
        if best == "geometric":
            how = f" geometrically (factor {fit['geometric']['rate']:.3g} per unit of {label})"
        elif best == "algebraic":
            how = f" algebraically (power {fit['algebraic']['power']:.3g})"
        verdict, msg = "converges", f"residual falls from {first:.1e} to {last:.1e}{how}"
    else:
        verdict, msg = (
            "stalls",
            f"residual does not fall with {label} ({first:.1e} -> {last:.1e}): a failure of the "
            "construction (a wrong formula), not of the truncation",
        )
    return ResolutionStudy(label, tuple(res), vals, fit, verdict, msg)
