"""Complex projective space CP^n with the Fubini–Study form, on the affine chart z_0 = 1 and its atlas.

Coordinates x = (Re w, Im w) in R^2n; the other affine charts z_k = 1 (k = 1..n) are declared as
Model(charts=...), with the same formulas in their own coordinates (the potential is log(1 + |u|^2)
in every affine chart), and the projector z z^H / |z|^2 as the embedding shared by all charts. The
torus-fixed points [e_k] lie one in each affine chart (all but [e_0] at infinity of the main one). The form is computed from the Kähler potential
K = log(1 + |w|^2) as omega = (i/2) d dbar K: with h_jk = d^2 K / dw_j dwbar_k and
H = h^T, omega(u, v) = Im(u^H H v), i.e. the real matrix [[Im H, Re H], [-Re H, Im H]].
Actions (finite.md row 3): the torus [z_0 : e^{i t_1} z_1 : ...] with
mu_k = -|w_k|^2 / (2 (1 + |w|^2)), and U(n+1) by [z] -> [g z] with
<mu(z), xi> = (i/2) z^H xi z / |z|^2.
"""

import jax
import jax.numpy as jnp
import numpy as np

import hamcheck


def kahler_potential(x):
    return jnp.log1p(x @ x)


def fubini_study(x):
    n = x.shape[0] // 2
    hess = jax.hessian(kahler_potential)(x)
    Kaa, Kab = hess[:n, :n], hess[:n, n:]
    Kba, Kbb = hess[n:, :n], hess[n:, n:]
    h = ((Kaa + Kbb) + 1j * (Kab - Kba)) / 4  # d^2 K / dw_j dwbar_k
    H = h.T
    return jnp.block([[H.imag, H.real], [-H.real, H.imag]])


def lift(x, k):
    """Homogeneous coordinates z (z_k = 1) of the point x = (Re u, Im u) of the affine chart z_k = 1."""
    n = x.shape[0] // 2
    u = x[:n] + 1j * x[n:]
    return jnp.concatenate([u[:k], jnp.ones(1, dtype=u.dtype), u[k:]])


def chart_of(z, k):
    """The coordinates (Re u, Im u) of [z] in the affine chart z_k = 1."""
    u = jnp.concatenate([z[:k], z[k + 1 :]]) / z[k]
    return jnp.concatenate([u.real, u.imag])


def projector(z):
    """[z] as the Hermitian projector z z^H / |z|^2, real and imaginary parts flattened: the same in every chart."""
    P = jnp.outer(z, z.conj()) / jnp.real(z.conj() @ z)
    return jnp.concatenate([P.real.ravel(), P.imag.ravel()])


def _phases(g, n):
    """The rotation factors c_j of w_j (c_0 = 1) of a torus element g acting on the main chart's (Re w, Im w)."""
    idx = jnp.arange(n)
    return jnp.concatenate([jnp.ones(1, dtype=complex), g[idx, idx] + 1j * g[n + idx, idx]])


def torus(n, name=None, scale=1.0):
    """CP^n (omega scaled by ``scale``) with the n-torus rotating the coordinates z_1, ..., z_n, with its atlas.

    ``scale = 2k`` makes [omega / 2 pi] k times the hyperplane class (moment values 0, -k at the fixed points).
    """
    name = name or f"CP{n}-torus"
    basis = []
    for k in range(n):
        E = np.zeros((2 * n, 2 * n))
        E[k, n + k], E[n + k, k] = -1.0, 1.0  # d/dt e^{it} w_k: (a, b) -> (-b, a)
        basis.append(E)
    algebra = hamcheck.LieAlgebra.from_matrices(basis, names=[f"t{k + 1}" for k in range(n)])

    def chart(k):
        def moment(x):
            a = jnp.abs(lift(x, k)) ** 2
            return -scale * a[1:] / (2 * jnp.sum(a))

        def action(g, x):
            if k == 0:  # the main chart: the torus acts linearly
                return g @ x
            c = _phases(g, n)
            return chart_of(c * lift(x, k), k)

        return dict(form=lambda x: scale * fubini_study(x), algebra=algebra, moment=moment, action=action,
                    embedding=lambda x: projector(lift(x, k)))

    charts = tuple(hamcheck.Model(f"{name} (z{k} = 1)", 2 * n, **chart(k)) for k in range(1, n + 1))
    return hamcheck.Model(name, 2 * n, **chart(0), charts=charts)


def unitary_algebra(m):
    """u(m) with basis i E_jj, E_jk - E_kj, i (E_jk + E_kj)."""
    basis, names = [], []
    for j in range(m):
        E = np.zeros((m, m), complex)
        E[j, j] = 1j
        basis.append(E)
        names.append(f"d{j}")
    for j in range(m):
        for k in range(j + 1, m):
            A = np.zeros((m, m), complex)
            A[j, k], A[k, j] = 1.0, -1.0
            S = np.zeros((m, m), complex)
            S[j, k] = S[k, j] = 1j
            basis += [A, S]
            names += [f"a{j}{k}", f"s{j}{k}"]
    return hamcheck.LieAlgebra.from_matrices(basis, names=names)


def unitary(n, name=None):
    """CP^n with U(n+1) acting by [z] -> [g z], on the affine chart z_0 = 1 with the other affine charts."""
    name = name or f"CP{n}-unitary"
    algebra = unitary_algebra(n + 1)
    basis = jnp.asarray(algebra.basis)

    def chart(k):
        def moment(x):
            z = lift(x, k)
            return jnp.real(0.5j * jnp.einsum("i,aij,j->a", z.conj(), basis, z)) / jnp.real(z.conj() @ z)

        return dict(
            form=fubini_study, algebra=algebra, moment=moment, action=lambda g, x: chart_of(g @ lift(x, k), k),
            sample=lambda rng: 0.7 * rng.standard_normal(2 * n), embedding=lambda x: projector(lift(x, k)),
        )

    charts = tuple(hamcheck.Model(f"{name} (z{k} = 1)", 2 * n, **chart(k)) for k in range(1, n + 1))
    return hamcheck.Model(name, 2 * n, **chart(0), charts=charts)


cp2_torus = torus(2)
cp2_unitary = unitary(2)
