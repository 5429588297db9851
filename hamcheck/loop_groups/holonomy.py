"""Holonomy of a connection, its conjugacy class, the stabilizer two ways, and the classification.

Parallel transport ``U' = (1/c) A U``, ``U(0) = I`` around the circle
(:func:`hamcheck.circle.propagate`), so ``Hol(g . A) = g(0) Hol(A) g(0)^-1``: the
conjugacy class of the holonomy is a gauge invariant, and for SU(2) it fixes
the orbit, represented by the constant connection ``a e_3`` with
``a/c = phi / 2 pi`` in ``[0, 1]`` (``phi`` the rotation angle of ``Ad_Hol``).
The stabilizer ``{xi : c xi' = [A, xi]}`` is computed from the transport (the
centralizer of the holonomy) and as a Fourier kernel, both through
:func:`hamcheck.circle.kernel`.

>>> import numpy as np
>>> H = holonomy(constant_connection(0.3, 64), c=1.0)          # U' = (1/c) A U around the circle
>>> bool(abs(H.trace.real - 2 * np.cos(0.3 * np.pi)) < 1e-12)
True
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from .. import circle
from ..circle.classification import format_classification
from ..errors import UsageError
from .groups import SU2, MatrixGroup, _check_connection, _check_group, _check_level, constant_connection, grid
from .tolerances import TOLERANCES

__all__ = [
    "Holonomy",
    "holonomy",
    "su2_class",
    "stabilizer_dimension_fourier",
    "stabilizer_dimension_transport",
    "classify",
    "classify_file",
    "format_classification",
]

#: The holonomy is a :class:`hamcheck.circle.Propagation` (matrix, error, steps, trace).
Holonomy = circle.Propagation


def holonomy(A, c: float, group: MatrixGroup = SU2, tol: float | None = None, max_steps: int = 2**20) -> Holonomy:
    """Parallel transport ``U' = (1/c) A U``, ``U(0) = I``, around the circle.

    ``A`` holds samples on a uniform grid; between them it is the
    trigonometric interpolant (exact for band-limited connections). ``tol``
    (default ``TOLERANCES.holonomy``) is the target of the propagator's error
    estimate; :class:`hamcheck.ConvergenceError` when it cannot be reached.

    >>> H = holonomy(constant_connection(1.0, 16), c=1.0)   # a/c = 1: central
    >>> bool(np.allclose(H.matrix, -np.eye(2), atol=1e-12))
    True
    """
    group = _check_group(group)
    A = _check_connection(A, group)
    c = _check_level(c)
    generator = circle.Periodic.from_samples(group.element(A) / c)
    return circle.propagate(generator, tol=TOLERANCES.holonomy if tol is None else tol, max_steps=max_steps, expm=group.exp)


def su2_class(H) -> dict:
    """Conjugacy class of ``H`` in SU(2): trace, rotation angle, constant representative.

    ``H`` is conjugate to ``exp(phi e_3)`` with ``phi`` in ``[0, 2 pi]`` (the angle
    of the rotation ``Ad_H`` of R^3); the constant connection ``a e_3`` with
    ``a / c = phi / 2 pi`` in ``[0, 1]`` has this holonomy. ``phi`` is computed
    with ``atan2`` (well conditioned at ``H = +-I``, unlike ``arccos`` of the trace).
    """
    H = np.asarray(H)
    alpha, beta = H[0, 0], H[1, 0]
    half = math.atan2(math.hypot(alpha.imag, abs(beta)), alpha.real)
    return {"trace": float(2 * alpha.real), "rotation_angle": 2 * half, "a_over_c": half / np.pi}


def _fourier_basis(M: int, K: int) -> tuple[np.ndarray, np.ndarray]:
    th = grid(M)
    cols = [np.ones(M)]
    dcols = [np.zeros(M)]
    for n in range(1, K + 1):
        cols += [np.cos(n * th), np.sin(n * th)]
        dcols += [-n * np.sin(n * th), n * np.cos(n * th)]
    return np.stack(cols, 1), np.stack(dcols, 1)


def stabilizer_dimension_fourier(A, c: float, group: MatrixGroup = SU2, modes: int | None = None) -> dict:
    """Dimension of ``{xi : [xi, A] + c xi' = 0}`` by Fourier analysis.

    ``xi`` ranges over trigonometric polynomials with ``|n| <= modes`` (default
    ``min(M // 2, 40)``); the map is evaluated on a grid fine enough that the
    products are not aliased, and the kernel is counted by :func:`hamcheck.circle.kernel`.
    """
    group = _check_group(group)
    A = _check_connection(A, group)
    c = _check_level(c)
    M = A.shape[0]
    K = min(M // 2, 40) if modes is None else int(modes)
    if K < 0:
        raise UsageError(f"modes must be >= 0; got {modes}")
    L = 2 * (M // 2 + K) + 1
    Af = circle.Periodic.from_samples(A).on_grid(L)
    F, dF = _fourier_basis(L, K)
    d = group.dim
    E = np.eye(d)
    # column (j, a): xi = F_j e_a; delta = [e_a, A] F_j + c F_j' e_a
    brackets = np.stack([group.bracket(np.broadcast_to(E[a], Af.shape), Af) for a in range(d)])  # (d, L, d)
    cols = brackets[None] * F.T[:, None, :, None] + c * dF.T[:, None, :, None] * E[None, :, None, :]
    Lmat = cols.reshape(F.shape[1] * d, L * d).T * np.sqrt(np.repeat(group.norms[None], L, 0).ravel())[:, None]
    ker = circle.kernel(Lmat)
    return {"dimension": ker.dim, "smallest": ker.smallest(), "modes": K}


def stabilizer_dimension_transport(A, c: float, group: MatrixGroup = SU2, hol: Holonomy | None = None) -> dict:
    """Dimension of the stabilizer from the holonomy: the centralizer of ``Hol(A)``.

    Solutions of ``c xi' = [A, xi]`` are ``xi = U xi_0 U^-1`` with ``U`` the
    parallel transport; they are periodic exactly when ``Hol xi_0 Hol^-1 = xi_0``.
    """
    group = _check_group(group)
    H = hol or holonomy(A, c, group)
    conj = group.coordinates(group.conj(H.matrix, group.basis))  # row a: Ad_H e_a
    ker = circle.kernel(conj.T - np.eye(group.dim), scale=2.0, error=H.error)  # |Ad_H - 1| <= 2
    return {"dimension": ker.dim, "smallest": ker.smallest()}


def classify(A, c: float, group: MatrixGroup = SU2, *, modes: int | None = None, tol: float | None = None) -> circle.OrbitClassification:
    """Holonomy, conjugacy class, stabilizer (two ways) and constant representative of ``A``.

    ``A`` has shape (M, d): samples on a uniform grid. For SU(2) the class is
    ``central +I``, ``central -I`` or ``regular``, the rotation number is
    ``a/c = phi / 2 pi`` and the representative the constant connection
    ``a e_3``; other groups get ``central`` / ``non-central`` and the
    eigenvalue angles. Returns a :class:`hamcheck.circle.OrbitClassification`.

    >>> d = classify(constant_connection(0.5, 32), c=0.5)     # a/c = 1: Hol = -I
    >>> d.orbit_class, d.stabilizer_dim, round(d.representative, 12)
    ('central -I', 3, 0.5)
    """
    group = _check_group(group)
    A = _check_connection(A, group)
    c = _check_level(c)
    H = holonomy(A, c, group, tol=tol)
    st_t = stabilizer_dimension_transport(A, c, group, hol=H)
    st_f = stabilizer_dimension_fourier(A, c, group, modes=modes)
    fields = {}
    if group.kind == "su2":
        cl = su2_class(H.matrix)
        q = cl["a_over_c"]
        central = st_t["dimension"] == 3
        fields = dict(
            orbit_class=("central +I" if q < 0.5 else "central -I") if central else "regular",
            rotation_number=q, representative=c * q, representative_trace=2 * math.cos(math.pi * q),
            representative_note="the constant connection a e_3 with a/c = phi/2pi in [0, 1] has this holonomy",
            details={"rotation_angle": cl["rotation_angle"]},
        )
    else:
        fields = dict(
            orbit_class="central" if st_t["dimension"] == group.dim else "non-central", rotation_number=None,
            representative=None, representative_note="constant representatives are computed for SU(2) only",
            details={"eigenvalue_angles": np.sort(np.angle(np.linalg.eigvals(H.matrix))).tolist()},
        )
    same = st_t["dimension"] == st_f["dimension"]
    return circle.OrbitClassification(
        family="loop group", group=group.name, c=c, trace=H.trace, matrix_name="holonomy", matrix=H.matrix,
        error=H.error, steps=H.steps, stabilizer_dim=st_t["dimension"], stabilizer_dim_fourier=st_f["dimension"],
        # the transport gives a dimension, not a basis: agreement is that of the dimensions
        stabilizer_agreement=0.0 if same else float("inf"), stabilizer_method="transport",
        representative_label="a e_3 with a", samples=int(A.shape[0]),
        stabilizer_singular_values={"transport": st_t["smallest"], "fourier": st_f["smallest"]},
        replay=f"hamcheck.loop_groups.classify(A, c={c:g}, group={group.name})", **fields,
    )


def classify_file(path, c=None, *, group: MatrixGroup = SU2, M: int = 512) -> circle.OrbitClassification:
    """Load a connection from .npy/.csv/.py (:func:`hamcheck.circle.read_input`) and classify it.

    The file holds ``A`` as samples on a uniform grid: shape (M, d) real
    coordinates in the basis ``e_k`` (three columns for SU(2)). A .py file
    defines ``A`` (array or function of theta) and optionally ``c``.
    """
    group = _check_group(group)
    what = (
        f"real samples of shape (M, {group.dim}) (coordinates in the {group.name} basis e_k = -i sigma_k / 2, one row "
        "per grid point)"
    )
    data = circle.read_input(path, "A", c, shape=(group.dim,), what=what, coupling="level", M=M)
    out = classify(data.values, data.c, group)
    flag = "" if group is SU2 else f" --group {group.name.replace('(', '').replace(')', '')}"
    return dataclasses.replace(
        out, source=data.source, input=data.kind, samples=data.M, spectral_tail=data.spectral_tail,
        warning=data.warning, replay=f"hamcheck holonomy {data.source} --c {_check_level(data.c):g}{flag}",
    )
