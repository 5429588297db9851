"""LieAlgebra: structure constants, Ad, Ad*, and declaration errors."""

import numpy as np
import pytest
import scipy.linalg
import sympy as sp

from hamcheck import LieAlgebra, ModelError

SO3_BASIS = [
    np.array([[0.0, 0, 0], [0, 0, -1], [0, 1, 0]]),
    np.array([[0.0, 0, 1], [0, 0, 0], [-1, 0, 0]]),
    np.array([[0.0, -1, 0], [1, 0, 0], [0, 0, 0]]),
]
PAULI = [np.array([[0, 1], [1, 0]]), np.array([[0, -1j], [1j, 0]]), np.array([[1, 0], [0, -1]])]


def levi_civita():
    eps = np.zeros((3, 3, 3))
    for i, j, k in [(0, 1, 2), (1, 2, 0), (2, 0, 1)]:
        eps[i, j, k], eps[j, i, k] = 1, -1
    return eps


def test_so3_structure_constants_are_levi_civita():
    # [L_i, L_j] = eps_ijk L_k for the infinitesimal rotations (from memory; any Lie theory text)
    so3 = LieAlgebra.from_matrices(SO3_BASIS)
    assert np.allclose(so3.structure_constants, levi_civita(), atol=1e-14)
    assert not so3.is_abelian and so3.is_matrix and so3.dim == 3


def test_su2_with_complex_basis():
    # e_k = -i sigma_k / 2 gives [e_j, e_k] = eps_jkl e_l (docs/references.md, loop groups; from memory)
    su2 = LieAlgebra.from_matrices([-0.5j * s for s in PAULI])
    assert np.allclose(su2.structure_constants, levi_civita(), atol=1e-14)


def test_sl2_bracket_against_sympy():
    # independent oracle: sympy's exact commutators of H, E, F, expanded in the basis
    H, E, F = sp.Matrix([[1, 0], [0, -1]]), sp.Matrix([[0, 1], [0, 0]]), sp.Matrix([[0, 0], [1, 0]])
    basis = [H, E, F]
    a, b, c = sp.symbols("a b c")
    expected = np.zeros((3, 3, 3))
    for i, X in enumerate(basis):
        for j, Y in enumerate(basis):
            comm = X * Y - Y * X
            sol = sp.solve(list(a * H + b * E + c * F - comm), [a, b, c], dict=True)[0]
            expected[i, j] = [float(sol[s]) for s in (a, b, c)]
    sl2 = LieAlgebra.from_matrices([np.array(m, dtype=float) for m in basis])
    assert np.allclose(sl2.structure_constants, expected, rtol=0, atol=1e-14)


def test_ad_is_a_homomorphism_and_matches_exp_of_ad(rng=np.random.default_rng(1)):
    # Ad(gh) = Ad(g) Ad(h) and Ad(exp xi) = expm(ad xi) (common practice: Lie group basics)
    so3 = LieAlgebra.from_matrices(SO3_BASIS)
    xi, eta = rng.standard_normal(3), rng.standard_normal(3)
    g, h = np.asarray(so3.exp(xi)), np.asarray(so3.exp(eta))
    assert np.allclose(so3.Ad(g @ h), np.asarray(so3.Ad(g)) @ np.asarray(so3.Ad(h)), atol=1e-13)
    ad = np.einsum("a,abc->cb", xi, so3.structure_constants)
    assert np.allclose(so3.Ad(g), scipy.linalg.expm(ad), atol=1e-13)
    assert np.allclose(so3.exp(xi), scipy.linalg.expm(sum(x * m for x, m in zip(xi, SO3_BASIS))), atol=1e-13)


def test_coadjoint_preserves_the_pairing(rng=np.random.default_rng(2)):
    # <Ad*_g mu, Ad_g xi> = <mu, xi> (definition of the coadjoint action)
    sl2 = LieAlgebra.from_matrices([np.array([[1.0, 0], [0, -1]]), np.array([[0.0, 1], [0, 0]]), np.array([[0.0, 0], [1, 0]])])
    g = sl2.random_group_elements(rng, 1)[0]
    mu, xi = rng.standard_normal(3), rng.standard_normal(3)
    lhs = np.asarray(sl2.coadjoint(g, mu)) @ (np.asarray(sl2.Ad(g)) @ xi)
    assert lhs == pytest.approx(mu @ xi, rel=1e-12)


def test_not_closed_names_the_bracket():
    with pytest.raises(ModelError, match=r"\[e1, e2\] leaves the span"):
        LieAlgebra.from_matrices(SO3_BASIS[:2])


def test_dependent_basis_is_rejected():
    with pytest.raises(ModelError, match="not linearly independent"):
        LieAlgebra.from_matrices([SO3_BASIS[0], 2 * SO3_BASIS[0]])


def test_non_square_and_name_errors():
    with pytest.raises(ModelError, match="square matrices"):
        LieAlgebra.from_matrices([np.zeros((2, 3))])
    with pytest.raises(ModelError, match="names"):
        LieAlgebra.from_matrices(SO3_BASIS, names=["a", "b"])


def test_structure_constants_checks_jacobi_and_antisymmetry():
    eps = levi_civita()
    assert LieAlgebra.from_structure_constants(eps).dim == 3
    bad = eps.copy()
    bad[0, 1, 2] = 2.0  # breaks antisymmetry
    with pytest.raises(ModelError, match="not antisymmetric"):
        LieAlgebra.from_structure_constants(bad)
    # [e1,e2] = e3, [e1,e3] = e1, [e2,e3] = 0: the Jacobi sum for (e1,e2,e3) is -e3
    jac = np.zeros((3, 3, 3))
    jac[0, 1], jac[1, 0] = [0, 0, 1], [0, 0, -1]
    jac[0, 2], jac[2, 0] = [1, 0, 0], [-1, 0, 0]
    with pytest.raises(ModelError, match="Jacobi identity for the triple"):
        LieAlgebra.from_structure_constants(jac)


def test_abstract_algebra_has_no_group():
    heis = np.zeros((3, 3, 3))
    heis[0, 1, 2], heis[1, 0, 2] = 1, -1
    alg = LieAlgebra.from_structure_constants(heis, names=["p", "q", "z"])
    with pytest.raises(ModelError, match="from_matrices"):
        alg.exp(np.zeros(3))
    assert "abstract" in repr(alg)


def _gl(n):
    """Elementary basis E_ij of gl(n) and its structure constants [E_ij, E_kl] = d_jk E_il - d_li E_kj
    (common practice)."""
    idx = [(i, j) for i in range(n) for j in range(n)]
    pos = {ij: a for a, ij in enumerate(idx)}
    E = []
    for i, j in idx:
        m = np.zeros((n, n))
        m[i, j] = 1.0
        E.append(m)
    C = np.zeros((n * n,) * 3)
    for a, (i, j) in enumerate(idx):
        for b, (k, l) in enumerate(idx):
            C[a, b, pos[(i, l)]] += j == k
            C[a, b, pos[(k, j)]] -= l == i
    return E, C


@pytest.mark.parametrize("n", [3, 8])  # 3: dense products (1/9 of the entries used); 8: the sparse path (1/64)
def test_structure_constants_of_gl_n_match_the_formula(n):
    E, C = _gl(n)
    alg = LieAlgebra.from_matrices(E)
    assert np.array_equal(alg.structure_constants, C)
    assert np.allclose(np.asarray(alg.coordinates(2.0 * E[5] - E[1])), 2.0 * np.eye(n * n)[5] - np.eye(n * n)[1])


def test_a_sparse_basis_that_is_not_closed_names_the_bracket():
    # negative control on the sparse path: E_12 and E_21 of gl(8) without E_11 - E_22 = [E_12, E_21]
    E, _ = _gl(8)
    with pytest.raises(ModelError, match=r"\[a, b\] leaves the span"):
        LieAlgebra.from_matrices([E[1], E[8]], names=["a", "b"])


def test_a_sparse_torus_is_abelian_exactly():
    # n rotation blocks in 2n x 2n matrices (the CP^n benchmark's torus, here n = 64): abelian, so C = 0 exactly
    n = 64
    basis = np.zeros((n, 2 * n, 2 * n))
    for k in range(n):
        basis[k, k, n + k], basis[k, n + k, k] = -1.0, 1.0
    alg = LieAlgebra.from_matrices(basis)
    assert not np.any(alg.structure_constants)
    assert np.allclose(np.asarray(alg.coordinates(3.0 * basis[7])), 3.0 * np.eye(n)[7])
