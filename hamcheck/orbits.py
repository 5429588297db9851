"""Coadjoint orbits as Hamiltonian G-spaces: chart, KKS form, moment map, action.

The orbit through ``lambda`` (given by its components ``<lambda, e_a>``) is
charted near ``lambda`` by exponential coordinates on a complement ``m`` of
the stabilizer: ``y -> Ad*_{exp(Y)} lambda`` with ``Y = sum_i y_i m_i``. With
``theta_i = g^-1 d_i g`` (the Maurer-Cartan form of the chart) the
Kirillov-Kostant-Souriau form is, from its definition
``omega(ad*_xi mu, ad*_eta mu) = s <mu, [xi, eta]>`` (``s = sign * flow``),

    ``omega_ij(y) = s <lambda, [theta_i, theta_j]>``.

For exponential coordinates ``theta`` and ``Ad`` come from one matrix
exponential of the ``2k x 2k`` block ``[[-ad_Y, 1], [0, 0]]`` (whose upper
blocks are ``exp(-ad_Y)`` and ``(1 - exp(-ad_Y)) / ad_Y``), so only the
structure constants are needed. The moment map is the inclusion
``mu(y) = Ad*_{g(y)} lambda``; the vector fields are the coadjoint ones
pushed to the chart by the pseudo-inverse of ``d mu`` (never derived from the
form, so the moment equation is a genuine check); a matrix algebra also gets
the finite action ``h . y = chart^-1(Ad*_h mu(y))`` by Gauss-Newton from the
chart's centre, with the implicit-function derivative.

Another chart can be given as ``chart=g`` with ``g(y)`` a group element (a
matrix) whose orbit points ``Ad*_{g(y)} lambda`` cover the orbit; then
``theta`` is computed by autodiff. :func:`unitary_flag_chart` is such a chart
for generic orbits of U(n): it covers the orbit up to measure zero and holds
every torus-fixed point, which integration and localization need.

Which chart is the default
--------------------------
The exponential chart is local: it covers a compact orbit many times over
``R^k`` and its exponential is accurate only for ``|ad_Y| <= 20``, so no
integral can be taken over it. Where a chart covering the orbit once up to
measure zero is known, ``coadjoint_orbit`` uses it and declares its domain
(all of ``R^k``), so ``localization``, ``fixed_points``, ``moment_image`` and
``reduce`` work on the built model with no extra arguments:

* regular orbits of ``u(n)`` and ``su(n)`` (any basis of anti-Hermitian
  ``n x n`` matrices spanning them) for prime ``n``: the flag chart
  :func:`unitary_flag_chart`, composed with the unitary that diagonalises the
  orbit point, so that every fixed point of the diagonal torus is in the chart;
* orbits of ``so(3)`` (any basis of real antisymmetric ``3 x 3`` matrices):
  the flag chart of ``U(2)`` pushed to ``SO(3)`` by the double cover
  ``R(U)_ab = tr(s_a U s_b U^*) / 2`` (``s_a`` the Pauli matrices), composed
  with the rotation that takes the orbit point to the third axis, so both
  fixed points of the rotations about that axis are in the chart.

Elsewhere (singular orbits, other groups, structure constants only) the
model keeps the exponential chart and records in ``model.construction``
(an :class:`OrbitChart`) that it does not cover the orbit, and integrals over
it refuse with one line saying what to pass (``chart=`` and ``domain=``).

Example
-------
>>> import numpy as np
>>> from hamcheck import LieAlgebra, check
>>> from hamcheck.orbits import coadjoint_orbit
>>> L = [np.array([[0, 0, 0], [0, 0, -1], [0, 1, 0]]), np.array([[0, 0, 1], [0, 0, 0], [-1, 0, 0]]),
...      np.array([[0, -1, 0], [1, 0, 0], [0, 0, 0]])]
>>> sphere = coadjoint_orbit(LieAlgebra.from_matrices(L), [0.0, 0.0, 2.0])
>>> sphere.dim, check(sphere, points=8).passed
(2, True)
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._jax import jax, jnp
from .algebra import LieAlgebra
from .errors import ModelError
from .model import Convention, Model

__all__ = ["OrbitChart", "coadjoint_orbit", "stabilizer_dimension", "unitary_flag_chart"]

#: Relative singular value of ``xi -> ad*_xi lambda`` below which a direction
#: counts as stabilizing: exact stabilizers give ~1e-16, and genuine directions
#: of a badly scaled orbit are still far above 1e-10.
STABILIZER_RTOL = 1e-10
#: Gauss-Newton iterations of the inverse chart (quadratic convergence: about
#: six suffice from a start at distance 1; the rest absorb damped steps).
NEWTON_ITERATIONS = 30
#: Longest Gauss-Newton step in chart units: keeps a far target from throwing
#: the iteration onto another sheet of the (non-injective) exponential chart.
NEWTON_MAX_STEP = 0.5
#: Relative residual of the inverse chart above which the target counts as
#: outside the chart (the action then returns NaN, reported by the checks as a
#: point that left the chart). Converged iterations reach ~1e-15.
NEWTON_RTOL = 1e-9
#: Scale of sampled chart points: inside the region where exponential
#: coordinates are injective for unit-size bases.
SAMPLE_SCALE = 0.3
#: Scale of sampled points of a covering (flag) chart: its coordinates are
#: dimensionless and the orbit's bulk lies at |y| ~ 1 (half of CP^1 is
#: |z| < 1), so fixed-point searches started there reach every fixed point
#: in the chart, while |y| stays where the chart is well conditioned.
COVERING_SAMPLE_SCALE = 1.0


def _coad_matrix(C, mu):
    """``M[b, c] = <ad*_{e_c} mu, e_b> = -sum_a C[c, b, a] mu_a``."""
    return -jnp.einsum("cba,a->bc", C, mu)


def stabilizer_dimension(algebra: LieAlgebra, point) -> int:
    """Dimension of the stabilizer of ``point`` under the coadjoint action.

    >>> import numpy as np; from hamcheck import LieAlgebra
    >>> so3 = LieAlgebra.from_structure_constants(np.array([[[0,0,0],[0,0,1],[0,-1,0]],
    ...     [[0,0,-1],[0,0,0],[1,0,0]], [[0,1,0],[-1,0,0],[0,0,0]]]))
    >>> stabilizer_dimension(so3, [0, 0, 1])
    1
    """
    return algebra.dim - _complement(algebra, np.asarray(point, dtype=float)).shape[0]


def _complement(algebra, lam):
    M = np.asarray(_coad_matrix(np.asarray(algebra.structure_constants), lam))
    _, s, vt = np.linalg.svd(M)
    if s.size == 0 or s[0] == 0.0:
        return np.zeros((0, algebra.dim))
    rank = int(np.sum(s > STABILIZER_RTOL * s[0]))
    return vt[:rank]


#: Scaling-and-squaring exponential used by the exponential chart: Taylor
#: degree 12 after 2^-6 scaling has truncation error below 1e-16 relative for
#: ``|ad_Y| <= 20`` (far outside the region where the chart is injective), and
#: it compiles in a fraction of the time of a general-purpose ``expm``.
EXP_TAYLOR_DEGREE = 12
EXP_SQUARINGS = 6


def _expm(A):
    """Matrix exponential by fixed scaling and squaring (straight-line code, cheap to trace)."""
    B = A / 2.0**EXP_SQUARINGS
    eye = jnp.eye(A.shape[0], dtype=A.dtype)
    E = eye
    for j in range(EXP_TAYLOR_DEGREE, 0, -1):  # Horner: 1 + B/1 (1 + B/2 (1 + ...))
        E = eye + (B @ E) / j
    for _ in range(EXP_SQUARINGS):
        E = E @ E
    return E


def _exponential_chart(C, lam, mbasis):
    """``y -> (mu(y), theta(y))`` for exponential coordinates on ``m``."""
    k = C.shape[0]
    eye = jnp.eye(k)
    zero = jnp.zeros((k, k))

    def chart(y):
        Y = y @ mbasis
        A = jnp.einsum("a,abc->cb", Y, C)  # column b: coordinates of [Y, e_b]
        block = jnp.block([[-A, eye], [zero, zero]])
        E = _expm(block)
        ad_inv = E[:k, :k]  # Ad_{exp(-Y)} = exp(-ad_Y)
        phi = E[:k, k:]  # (1 - exp(-ad_Y)) / ad_Y
        mu = ad_inv.T @ lam  # <Ad*_g lam, e_b> = <lam, Ad_{g^-1} e_b>
        theta = (phi @ mbasis.T).T  # row i: g^-1 d_i g
        return mu, theta, _chart_jacobian(C, lam, theta, ad_inv)

    return chart


def _chart_jacobian(C, lam, theta, ad_inv):
    """``J[b, i] = d_i <lam, Ad_{g^-1} e_b> = -<lam, [theta_i, Ad_{g^-1} e_b]>`` (no autodiff pass)."""
    return -jnp.einsum("c,aec,ia,eb->bi", lam, C, theta, ad_inv)


def _group_chart(algebra, lam, g_of_y):
    """``y -> (mu(y), theta(y))`` for a chart given by group elements ``g(y)``."""

    def chart(y):
        g = g_of_y(y)
        dg = jax.jacfwd(lambda z: g_of_y(z))(y)  # (n, n, d)
        ginv = jnp.linalg.inv(g)
        theta = jax.vmap(lambda D: algebra.coordinates(ginv @ D))(jnp.moveaxis(dg, 2, 0))
        ad_inv = algebra.Ad(ginv)
        C = jnp.asarray(algebra.structure_constants)
        return ad_inv.T @ lam, theta, _chart_jacobian(C, lam, theta, ad_inv)

    return chart


def _inverse_chart(local, d, scale):
    """``target -> y`` with ``mu(y) = target``: Gauss-Newton from ``y = 0``, NaN if it fails.

    Starting from the centre every time makes the result a function of the
    target alone, so composed actions agree exactly where the chart is injective.
    """

    def gauss_newton(target):
        def step(_, y):
            mu, _, J = local(y)
            dy = jnp.linalg.solve(J.T @ J, J.T @ (mu - target))
            n = jnp.linalg.norm(dy)
            return y - dy * jnp.minimum(1.0, NEWTON_MAX_STEP / jnp.maximum(n, 1e-300))

        y = jax.lax.fori_loop(0, NEWTON_ITERATIONS, step, jnp.zeros(d))
        miss = jnp.max(jnp.abs(local(y)[0] - target))
        return jnp.where(miss <= NEWTON_RTOL * scale, y, jnp.nan)

    @jax.custom_jvp
    def inverse(target):
        return gauss_newton(target)

    @inverse.defjvp
    def _jvp(primals, tangents):
        (target,), (dt,) = primals, tangents
        y = inverse(target)
        J = local(y)[2]
        return y, jnp.linalg.solve(J.T @ J, J.T @ dt)

    return inverse


def unitary_flag_chart(n: int):
    """Chart ``y in R^{n(n-1)} -> U(n)`` onto a dense open set of flags.

    ``g(y)`` is the Gram-Schmidt orthonormalisation of ``F L(y)``, with
    ``L(y)`` lower unitriangular (complex entries from ``y``) and ``F`` the
    unitary discrete Fourier matrix. For prime ``n`` every minor of ``F`` is
    nonzero (Chebotarev's theorem), so every coordinate flag, i.e. every fixed
    point of the diagonal torus on a generic orbit, lies in the chart.
    Use with ``coadjoint_orbit(u_n, point, chart=unitary_flag_chart(n))``.
    """
    idx = [(i, j) for j in range(n) for i in range(j + 1, n)]
    F = np.exp(-2j * np.pi * np.outer(np.arange(n), np.arange(n)) / n) / np.sqrt(n)

    def g(y):
        L = jnp.eye(n, dtype=jnp.complex128)
        for m, (i, j) in enumerate(idx):
            L = L.at[i, j].set(y[2 * m] + 1j * y[2 * m + 1])
        A = jnp.asarray(F) @ L
        cols = []
        for j in range(n):
            v = A[:, j]
            for q in cols:
                v = v - jnp.vdot(q, v) * q
            cols.append(v / jnp.sqrt(jnp.real(jnp.vdot(v, v))))
        return jnp.stack(cols, axis=1)

    return g


@dataclass(frozen=True)
class OrbitChart:
    """What :func:`coadjoint_orbit` built: the chart's kind and whether it covers the orbit once.

    ``kind`` is ``"exponential"`` (local exponential coordinates), ``"unitary-flag"``,
    ``"so3-flag"`` or ``"user"``; ``covers_once`` says whether the chart covers the orbit
    once up to measure zero (so integrals over ``domain`` are integrals over the orbit);
    ``reason`` says why the chart was chosen.
    """

    kind: str
    covers_once: bool
    point: tuple
    reason: str

    def __repr__(self) -> str:
        return f"OrbitChart({self.kind}, covers_once={self.covers_once})"


#: Relative size of the anti-Hermitian / antisymmetric part of a basis matrix
#: below which the basis counts as compact (u(n), su(n), so(3)): exact bases
#: give 0, round-off in user-built bases ~1e-16.
FAMILY_RTOL = 1e-12


def _trace_form_matrix(algebra, lam):
    """The matrix ``Lambda`` of ``g`` with ``-Re tr(Lambda e_a) = lambda_a`` (the point of ``g*`` as a matrix)."""
    B = np.asarray(algebra.basis)
    G = -np.real(np.einsum("aij,bji->ab", B, B))  # positive definite on a compact algebra
    return np.einsum("a,aij->ij", np.linalg.solve(G, lam), B)


def _compact_family(algebra):
    """``("unitary", n)`` for u(n)/su(n), ``("so3", 3)`` for so(3), else ``None`` (matrix bases only)."""
    if not algebra.is_matrix:
        return None
    B = np.asarray(algebra.basis)
    k, n = B.shape[0], B.shape[1]
    size = max(float(np.max(np.abs(B))), 1e-300)
    if np.max(np.abs(B + np.conj(np.swapaxes(B, 1, 2)))) > FAMILY_RTOL * size:
        return None
    rank = np.linalg.matrix_rank(np.concatenate([B.reshape(k, -1).real, B.reshape(k, -1).imag], axis=1))
    if rank != k:
        return None
    if np.all(np.isreal(B)) and n == 3 and k == 3:
        return ("so3", 3)
    traceless = np.max(np.abs(np.einsum("aii->a", B))) <= FAMILY_RTOL * size
    if k == n * n or (k == n * n - 1 and traceless):
        return ("unitary", n)
    return None


def _is_prime(n):
    return n >= 2 and all(n % p for p in range(2, int(n**0.5) + 1))


def _pauli_cover(U):
    """``R(U)_ab = Re tr(s_a U s_b U^*) / 2``: the rotation of ``R^3`` by a unitary ``U`` (SU(2) -> SO(3))."""
    s = jnp.asarray(np.array([[[0, 1], [1, 0]], [[0, -1j], [1j, 0]], [[1, 0], [0, -1]]], dtype=complex))
    return 0.5 * jnp.real(jnp.einsum("aij,jk,bkl,li->ab", s, U, s, jnp.conj(U).T))


def _covering_chart(algebra, lam, d):
    """``(g(y), OrbitChart)`` for a chart covering the orbit once, or ``(None, OrbitChart)`` with the reason."""
    point = tuple(float(v) for v in lam)
    family = _compact_family(algebra)
    if family is None:
        why = ("no covering chart is known for this algebra (only u(n), su(n) for prime n and so(3), declared by "
               "matrices); the exponential chart is local")
        return None, OrbitChart("exponential", False, point, why)
    Lam = _trace_form_matrix(algebra, lam)
    if family[0] == "so3":
        v = np.array([Lam[2, 1], Lam[0, 2], Lam[1, 0]])
        e3 = v / np.linalg.norm(v)
        # a rotation K with K e_3 = +-v / |v| (QR fixes the frame only up to sign; either sign puts the
        # point on the third axis, whose two fixed points are both in the flag chart)
        q, _ = np.linalg.qr(np.column_stack([e3, np.eye(3)]))
        K = np.column_stack([q[:, 1], q[:, 2], q[:, 0]])
        K = K if np.linalg.det(K) > 0 else K @ np.diag([-1.0, 1.0, 1.0])
        flag = unitary_flag_chart(2)
        Kt = jnp.asarray(K.T)
        return (lambda y: _pauli_cover(flag(y)) @ Kt), OrbitChart(
            "so3-flag", True, point, "so(3): the U(2) flag chart through the double cover; holds both fixed points "
            "of the rotations about the orbit point's axis")
    n = family[1]
    if d != n * (n - 1):
        return None, OrbitChart("exponential", False, point,
                                f"the orbit is singular (dimension {d} < {n * (n - 1)}); the flag chart is for regular "
                                "orbits, the exponential chart is local")
    if not _is_prime(n):
        return None, OrbitChart("exponential", False, point,
                                f"n = {n} is not prime, so the flag chart may miss torus-fixed points; the "
                                "exponential chart is local")
    _, V = np.linalg.eigh(1j * Lam)  # i Lambda = V D V^*: Ad_{V^*} Lambda is diagonal
    flag = unitary_flag_chart(n)
    Vh = jnp.asarray(np.conj(V).T)
    return (lambda y: flag(y) @ Vh), OrbitChart(
        "unitary-flag", True, point, f"regular orbit of u({n})/su({n}): the flag chart holds every fixed point of "
        "the diagonal torus")


def coadjoint_orbit(
    algebra: LieAlgebra,
    point,
    *,
    name=None,
    chart=None,
    domain=None,
    convention: Convention = Convention(),
    sample_scale: float | None = None,
) -> Model:
    """The coadjoint orbit through ``point`` (moment-map components) as a :class:`Model`.

    The orbit dimension is ``algebra.dim - stabilizer dimension``; a point
    fixed by the whole coadjoint action (orbit of dimension 0) is refused.
    ``chart`` (optional) is a function ``y -> g(y)`` into the group (matrix
    algebras only) with ``len(y)`` equal to the orbit dimension; ``domain``
    declares its integration domain (see :class:`Model`).

    Example
    -------
    >>> import numpy as np
    >>> from hamcheck import LieAlgebra
    >>> sl2 = LieAlgebra.from_matrices([np.diag([1.0, -1.0]), np.array([[0, 1.0], [0, 0]]),
    ...                                 np.array([[0, 0], [1.0, 0]])], names=["H", "E", "F"])
    >>> coadjoint_orbit(sl2, [0.0, 1.0, -1.0]).dim      # an elliptic orbit (hyperboloid sheet)
    2
    """
    if not isinstance(algebra, LieAlgebra):
        raise ModelError(f"algebra must be a hamcheck.LieAlgebra; got {type(algebra).__name__}")
    try:
        lam = np.asarray(point, dtype=float)
    except (TypeError, ValueError):
        raise ModelError(f"point must be a vector of {algebra.dim} moment-map components; got {point!r}") from None
    if lam.shape != (algebra.dim,) or not np.all(np.isfinite(lam)):
        raise ModelError(
            f"point must be {algebra.dim} finite moment-map components <point, e_a> (one per basis element "
            f"{list(algebra.names)}); got {np.array2string(lam, precision=4)} of shape {lam.shape}"
        )
    if not isinstance(convention, Convention):
        raise ModelError(f"convention must be a hamcheck.Convention; got {type(convention).__name__}")
    C = jnp.asarray(algebra.structure_constants)
    mbasis = _complement(algebra, lam)
    d = mbasis.shape[0]
    if d == 0:
        raise ModelError(
            f"the point {np.array2string(lam, precision=4)} is fixed by the whole coadjoint action (its stabilizer "
            "is all of g), so its orbit is a single point; pick a point with a smaller stabilizer"
        )
    if chart is None:
        cover, built = _covering_chart(algebra, lam, d)
        if cover is not None:
            sample_scale = COVERING_SAMPLE_SCALE if sample_scale is None else sample_scale
            local = _group_chart(algebra, jnp.asarray(lam), cover)
            domain = tuple((-np.inf, np.inf) for _ in range(d)) if domain is None else domain
        else:
            local = _exponential_chart(C, jnp.asarray(lam), jnp.asarray(mbasis))
            built = built if domain is None else OrbitChart("exponential", True, built.point, "domain declared by the caller")
    else:
        built = OrbitChart("user", True, tuple(float(v) for v in lam), "chart given by the caller")
        if not algebra.is_matrix:
            raise ModelError("chart=g(y) needs group elements; declare the algebra with LieAlgebra.from_matrices")
        if not callable(chart):
            raise ModelError(f"chart must be a callable y -> group element; got {type(chart).__name__}")
        local = _group_chart(algebra, jnp.asarray(lam), chart)
    sample_scale = SAMPLE_SCALE if sample_scale is None else float(sample_scale)
    s = convention.effective_sign
    flow = convention.flow
    lam_j = jnp.asarray(lam)

    def mu_of_y(y):
        return local(y)[0]

    def form(y):
        theta = local(y)[1]
        return s * jnp.einsum("c,abc,ia,jb->ij", lam_j, C, theta, theta)

    def vector_fields(y):
        mu, _, J = local(y)  # J = d mu / dy, (k, d)
        V = flow * _coad_matrix(C, mu)  # column c: ad*_{e_c} mu
        return jnp.linalg.solve(J.T @ J, J.T @ V).T

    action = None
    if algebra.is_matrix:
        inverse = _inverse_chart(local, d, float(np.max(np.abs(lam))))

        # one jitted function: every call site in a check kernel shares its compiled body
        @jax.jit
        def action(g, y):
            return inverse(algebra.coadjoint(g, mu_of_y(y)))

    label = name if name is not None else "orbit(" + ", ".join(f"{v:g}" for v in lam) + ")"
    return Model(
        label,
        d,
        form=form,
        algebra=algebra,
        moment=mu_of_y,
        vector_fields=vector_fields,
        action=action,
        sample=lambda rng: sample_scale * rng.standard_normal(d),
        convention=convention,
        domain=domain,
        construction=built,
    )
