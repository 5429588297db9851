"""Hypothesis: random linear Hamiltonian systems always pass; planted mistakes are always caught.

A constant symplectic form with a linear symplectic action and its quadratic
moment map mu_A = -1/2 x^T Omega A x is Hamiltonian (common practice: the
linear case of the moment map of a symplectic representation).
"""

import jax.numpy as jnp
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import hamcheck
from hamcheck.strategies import linear_systems, symplectic_matrices

FEW = settings(max_examples=4, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@FEW
@given(linear_systems())
def test_linear_systems_pass(system):
    report = hamcheck.check(system.model(), points=6)
    assert report.passed, str(report)


@FEW
@given(symplectic_matrices(max_pairs=4))
def test_random_symplectic_matrices_are_nondegenerate_and_antisymmetric(Omega):
    assert np.allclose(Omega, -Omega.T)
    assert np.linalg.matrix_rank(Omega) == Omega.shape[0]


def plant(system, kind):
    """A linear system's model with one mistake of the given kind."""
    O = jnp.asarray(system.Omega)
    if kind == "moment-sign":
        return system.model(moment=lambda x: -system.moment(x)), {"moment-sign"}
    if kind == "moment-scale":
        return system.model(moment=lambda x: 3.0 * system.moment(x)), {"moment-scale"}
    if kind == "right-action":
        return system.model(action=lambda g, x: jnp.linalg.solve(g, x)), {"right-action", "bracket-sign"}
    if kind == "not-antisymmetric":
        return system.model(form=lambda x: O + 0.5 * jnp.eye(system.dim)), {"not-antisymmetric"}
    if kind == "not-closed":
        # x_3 dx_1 ^ dx_2 added: d of it is dx_3 ^ dx_1 ^ dx_2 != 0 (needs dim >= 4)
        E = jnp.zeros((system.dim, system.dim)).at[0, 1].set(1.0).at[1, 0].set(-1.0)
        return system.model(form=lambda x: O + 0.3 * x[3] * E), {"not-closed"}
    if kind == "degenerate":
        P = jnp.eye(system.dim).at[0, 0].set(0.0).at[1, 1].set(0.0)
        return system.model(form=lambda x: P @ O @ P), {"degenerate"}
    raise ValueError(kind)


@pytest.mark.parametrize(
    "kind", ["moment-sign", "moment-scale", "right-action", "not-antisymmetric", "not-closed", "degenerate"]
)
@FEW
@given(data=st.data())
def test_planted_mistakes_are_always_caught(kind, data):
    # a "right action" of an abelian group is a left action (of the inverses): draw sp(2n) for it
    kinds = ("symplectic",) if kind == "right-action" else ("torus", "symplectic")
    system = data.draw(linear_systems(min_pairs=2 if kind == "not-closed" else 1, kinds=kinds))
    model, expected = plant(system, kind)
    report = hamcheck.check(model, points=6)
    assert not report.passed
    assert expected <= {f.kind for f in report.findings}, str(report)


@FEW
@given(linear_systems(kinds=("symplectic",)), st.floats(0.1, 2.0))
def test_offset_on_sp_is_found(system, size):
    # sp(2n) is semisimple: every constant shift breaks equivariance and is a coboundary
    shift = size * np.random.default_rng(0).standard_normal(len(system.generators))
    model = system.model(moment=lambda x: system.moment(x) + jnp.asarray(shift))
    report = hamcheck.check(model, points=6, only=["equivariance"])
    (finding,) = report.findings
    assert finding.kind == "moment-offset"
    assert finding.data["offset"] == pytest.approx(shift, rel=1e-6, abs=1e-9)
