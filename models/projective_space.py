"""Complex projective space CP^n with the Fubini–Study form, on the affine chart z_0 = 1.

Coordinates x = (Re w, Im w) in R^2n. The form is computed from the Kähler potential
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


def torus(n, name=None):
    """CP^n with the n-torus rotating the affine coordinates."""
    basis = []
    for k in range(n):
        E = np.zeros((2 * n, 2 * n))
        E[k, n + k], E[n + k, k] = -1.0, 1.0  # d/dt e^{it} w_k: (a, b) -> (-b, a)
        basis.append(E)
    algebra = hamcheck.LieAlgebra.from_matrices(basis, names=[f"t{k + 1}" for k in range(n)])

    def moment(x):
        w2 = x[:n] ** 2 + x[n:] ** 2
        return -w2 / (2 * (1 + jnp.sum(w2)))

    return hamcheck.Model(
        name or f"CP{n}-torus", 2 * n, form=fubini_study, algebra=algebra, moment=moment, action=lambda g, x: g @ x
    )


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
    """CP^n with U(n+1) acting by [z] -> [g z] on the affine chart."""
    algebra = unitary_algebra(n + 1)
    basis = jnp.asarray(algebra.basis)

    def lift(x):
        return jnp.concatenate([jnp.ones(1), x[:n] + 1j * x[n:]])

    def moment(x):
        z = lift(x)
        return jnp.real(0.5j * jnp.einsum("i,aij,j->a", z.conj(), basis, z)) / jnp.real(z.conj() @ z)

    def action(g, x):
        z = g @ lift(x)
        w = z[1:] / z[0]
        return jnp.concatenate([w.real, w.imag])

    return hamcheck.Model(
        name or f"CP{n}-unitary",
        2 * n,
        form=fubini_study,
        algebra=algebra,
        moment=moment,
        action=action,
        sample=lambda rng: 0.7 * rng.standard_normal(2 * n),
    )


cp2_torus = torus(2)
cp2_unitary = unitary(2)
