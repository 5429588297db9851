"""hamcheck.checks.group_equivariance: mu(g.x) = Ad*_g mu(x) at sampled group elements."""

import jax.numpy as jnp
import numpy as np

import hamcheck
from check_support import CONTROL_POINTS as POINTS, assert_negative_control
from hamcheck import LieAlgebra, Model


def test_negative_control(broken_mod):
    assert_negative_control(broken_mod, "group_equivariance", "shifted")


def test_skip_is_explained_not_silent():
    U1 = LieAlgebra.from_structure_constants(np.zeros((1, 1, 1)), names=["rot"])
    m = Model("fields only", 2, form=lambda x: jnp.array([[0.0, 1], [-1, 0]]), algebra=U1,
              moment=lambda x: jnp.array([-(x @ x) / 2]), vector_fields=lambda x: jnp.array([[-x[1], x[0]]]))
    report = hamcheck.check(m, points=POINTS)
    r = report.results["group_equivariance"]
    assert r.status == "skip" and "action" in r.message
    assert report.passed
