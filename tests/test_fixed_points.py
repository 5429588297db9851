"""fixed_points: zeros of X_xi, values <mu, xi>, weights on (T_pM, J).

Reference: docs/references.md rows F1 and F3b (CP^n: at the fixed
point [e_j] the weights are xi_k - xi_j, k != j, with xi_0 = 0, and the value
is -xi_j / 2).
"""

import numpy as np
import pytest

import hamcheck
from hamcheck import LieAlgebra, Model, UsageError
from hamcheck._jax import jax, jnp


def cpn(n, scale=1.0, mu_factor=1.0, name=None):
    """CP^n with omega = scale * (i/2) ddbar log|z|^2 in a tilted affine chart w -> [F (1, w)].

    F is the unitary DFT matrix, so every coordinate point [e_j] (a torus fixed
    point) lies in the chart; the torus acts by z_k -> exp(i t_k) z_k.
    """
    N = n + 1
    F = jnp.asarray(np.exp(-2j * np.pi * np.outer(np.arange(N), np.arange(N)) / N) / np.sqrt(N))
    torus = LieAlgebra.from_matrices(
        [np.diag([1j if k == j else 0 for k in range(N)]) for j in range(1, N)], names=[f"t{j}" for j in range(1, N)]
    )
    J = jnp.block([[jnp.zeros((n, n)), -jnp.eye(n)], [jnp.eye(n), jnp.zeros((n, n))]])

    def z_of(x):
        return F @ jnp.concatenate([jnp.ones(1, dtype=complex), x[:n] + 1j * x[n:]])

    def form(x):  # (i/2) ddbar phi = (J^T H - H J) / 4 for the real Hessian H of phi = log|z|^2
        H = jax.hessian(lambda y: jnp.log(jnp.real(jnp.vdot(z_of(y), z_of(y)))))(x)
        return scale * (J.T @ H - H @ J) / 4

    def moment(x):
        a = jnp.abs(z_of(x)) ** 2
        return -mu_factor * scale * a[1:] / (2 * jnp.sum(a))

    def action(g, x):
        z = jnp.conj(F.T) @ (jnp.diag(g) * z_of(x))
        w = z[1:] / z[0]
        return jnp.concatenate([jnp.real(w), jnp.imag(w)])

    return Model(name or f"CP{n}", 2 * n, form=form, algebra=torus, moment=moment, action=action)


def oscillator(n=2):
    """R^2n with sum dx_k ^ dy_k and z_k -> exp(i t_k) z_k: mu_k = -|z_k|^2 / 2 (docs/references.md row F1)."""
    torus = LieAlgebra.from_matrices([np.diag([1j if k == j else 0 for k in range(n)]) for j in range(n)])
    W = jnp.block([[jnp.zeros((n, n)), jnp.eye(n)], [-jnp.eye(n), jnp.zeros((n, n))]])

    def action(g, x):
        z = jnp.diag(g) * (x[:n] + 1j * x[n:])
        return jnp.concatenate([jnp.real(z), jnp.imag(z)])

    return Model(f"R{2 * n}", 2 * n, form=lambda x: W, algebra=torus,
                 moment=lambda x: -(x[:n] ** 2 + x[n:] ** 2) / 2, action=action)


@pytest.fixture(scope="module")
def cp2():
    return cpn(2)


def test_cp2_fixed_points_values_and_weights(cp2):
    xi = np.array([0.37, -1.21])
    fps = hamcheck.fixed_points(cp2, xi, starts=24)
    assert len(fps) == 3 and fps.isolated
    full = np.array([0.0, *xi])
    # docs/references.md row F3b: at [e_j] value -xi_j/2 and weights xi_k - xi_j (k != j)
    expected = sorted(
        ((-full[j] / 2, sorted(full[k] - full[j] for k in range(3) if k != j)) for j in range(3)), key=lambda e: -e[0]
    )
    for p, (value, weights) in zip(fps, expected):
        assert p.value == pytest.approx(value, abs=1e-12)
        assert sorted(p.weights) == pytest.approx(weights, abs=1e-9)
        assert np.max(np.abs(np.asarray(cp2.fields_at(jnp.asarray(p.point))).T @ xi)) < 1e-12
    # common practice: a positive-weight point is the maximum of <mu, xi>
    assert all(w > 0 for w in fps[0].weights) and all(w < 0 for w in fps[-1].weights)


def test_oscillator_weights_sign_and_repeated_weight():
    # docs/references.md row F1: weights xi_k at the origin; a repeated weight (1, 1) is resolved by the signature
    fps = hamcheck.fixed_points(oscillator(2), [1.0, 1.0], starts=4)
    assert len(fps) == 1
    assert fps[0].weights == pytest.approx((1.0, 1.0), abs=1e-12)
    fps = hamcheck.fixed_points(oscillator(2), [1.0, -2.0], starts=4)
    assert sorted(fps[0].weights) == pytest.approx([-2.0, 1.0], abs=1e-12)


def test_non_isolated_fixed_points_are_flagged():
    # planted: xi = 0 on one factor, so the whole C of that factor is fixed
    fps = hamcheck.fixed_points(oscillator(2), [1.0, 0.0], starts=4)
    assert len(fps) >= 1 and not fps.isolated


def test_bad_arguments(cp2):
    with pytest.raises(UsageError, match="2 finite coordinates"):
        hamcheck.fixed_points(cp2, [1.0, 2.0, 3.0])
    with pytest.raises(UsageError, match="starts"):
        hamcheck.fixed_points(cp2, [1.0, 2.0], starts=0)
    assert "FixedPoints('CP2'" in repr(hamcheck.fixed_points(cp2, "t1", starts=8))
