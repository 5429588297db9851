"""hamcheck.checks.closed: d omega = 0, from the full tensor and from random pairs."""

import jax.numpy as jnp
import numpy as np
import pytest
import sympy as sp

import hamcheck
from check_support import CONTROL_POINTS as POINTS, assert_diagnosed, assert_negative_control
from hamcheck import LieAlgebra, Model, Settings
from hamcheck.checks.closed import exterior_derivative


def test_negative_control(broken_mod):
    assert_negative_control(broken_mod, "closed", "not_closed")


def test_bundled_broken_model(broken_mod):
    assert_diagnosed(broken_mod, "not_closed", {"not-closed"})


def test_randomized_closedness_pairs(broken_mod, cpn_mod):
    pairs = Settings(full_tensor_max_dim=1)  # force the random-pair path on small models
    assert hamcheck.check(cpn_mod.cp2_torus, points=POINTS, only=["closed"], settings=pairs).passed
    report = hamcheck.check(broken_mod.not_closed, points=POINTS, only=["closed"], settings=pairs)
    assert report.results["closed"].status == "fail"


def test_exterior_derivative_matches_sympy():
    # sympy as an independent oracle for d omega of a non-closed polynomial 2-form on R^4
    xs = sp.symbols("x0:4")
    coeff = {(0, 1): 1 + xs[3] ** 2, (0, 2): xs[1] * xs[3], (1, 3): 2 + xs[0], (2, 3): 1 + xs[0] * xs[1]}
    W = sp.zeros(4, 4)
    for (i, j), f in coeff.items():
        W[i, j], W[j, i] = f, -f
    dW = [[[sp.diff(W[j, k], xs[i]) + sp.diff(W[k, i], xs[j]) + sp.diff(W[i, j], xs[k]) for k in range(4)]
           for j in range(4)] for i in range(4)]
    point = {s: v for s, v in zip(xs, [0.3, -1.2, 0.7, 0.5])}
    expected = np.array([[[float(e.subs(point)) for e in row] for row in plane] for plane in dW])
    form_np = sp.lambdify([xs], W, "jax")
    model = Model("sympy form", 4, form=lambda x: jnp.asarray(form_np(list(x)), dtype=float),
                  algebra=LieAlgebra.from_structure_constants(np.zeros((1, 1, 1))),
                  moment=lambda x: jnp.zeros(1), vector_fields=lambda x: jnp.zeros((1, 4)))
    got, _ = exterior_derivative(model, jnp.array([0.3, -1.2, 0.7, 0.5]))
    assert np.asarray(got) == pytest.approx(expected, abs=1e-14)
    assert np.abs(expected).max() > 0.5  # the oracle itself sees a non-closed form
