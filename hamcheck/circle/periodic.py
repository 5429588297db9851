"""Periodic functions on the circle R/2piZ: grids, Fourier modes, quadrature, trigonometric polynomials.

Everything works on arrays whose *axis 0* runs over the uniform grid
``theta_j = 2 pi j / M`` (``j = 0..M-1``); trailing axes are carried along, so
a matrix-valued loop is an array of shape ``(M, n, n)``. Functions marked (jax)
accept jax arrays and tracers (then they use ``jax.numpy`` and can be jitted
and differentiated) and use plain numpy on numpy input (no compilation); the
rest are numpy.

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

from dataclasses import dataclass

import numpy as np

from .._jax import jax, jnp
from ..errors import UsageError
from .tolerances import TOLERANCES

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
    "resolution_warning",
    "Periodic",
]

TWO_PI = 2.0 * np.pi


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


def resolution_warning(f, name: str):
    """``(tail, warning or None)`` for samples of the periodic function called ``name``."""
    tail = spectral_tail(f)
    if tail <= TOLERANCES.underresolved_tail:
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

    def trimmed(self, rtol: float | None = None) -> "Periodic":
        """Drop coefficients below ``rtol`` x the largest one (FFT round-off of exact samples).

        ``rtol`` defaults to ``circle.TOLERANCES.trim``.

        Such coefficients change values by less than round-off, but they would
        set the degree (and the cost of everything sized by it).
        """
        rtol = TOLERANCES.trim if rtol is None else rtol
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


