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

import numpy as np

from ._jax import jax, jnp
from .algebra import LieAlgebra
from .errors import ModelError
from .model import Convention, Model

__all__ = ["coadjoint_orbit", "stabilizer_dimension", "unitary_flag_chart"]

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


def coadjoint_orbit(
    algebra: LieAlgebra,
    point,
    *,
    name=None,
    chart=None,
    domain=None,
    convention: Convention = Convention(),
    sample_scale: float = SAMPLE_SCALE,
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
        local = _exponential_chart(C, jnp.asarray(lam), jnp.asarray(mbasis))
    else:
        if not algebra.is_matrix:
            raise ModelError("chart=g(y) needs group elements; declare the algebra with LieAlgebra.from_matrices")
        if not callable(chart):
            raise ModelError(f"chart must be a callable y -> group element; got {type(chart).__name__}")
        local = _group_chart(algebra, jnp.asarray(lam), chart)
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
    )
