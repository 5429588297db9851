"""flow(): DOP853 integration of the Hamiltonian vector field, and the `flow` check.

Reference: docs/references.md row F1 (oscillator: mu = -|z|^2/2, the flow of <mu, xi>
rotates z_k by exp(i xi_k t)); the check's negative control plants a flow
running backwards.
"""

import numpy as np
import pytest

import hamcheck
from hamcheck import LieAlgebra, Model, UsageError
from hamcheck._jax import jnp
from test_fixed_points import cpn, oscillator


def test_oscillator_flow_is_rotation():
    m = oscillator(2)
    x0 = np.array([1.0, 0.5, -0.3, 0.2])
    t = np.linspace(0.5, 6.0, 4)
    tr = hamcheck.flow(m, [1.0, 2.0], x0, t)
    z0 = x0[:2] + 1j * x0[2:]
    for ti, p in zip(t, tr.points):
        z = z0 * np.exp(1j * np.array([1.0, 2.0]) * ti)  # docs/references.md row F1: z_k -> exp(i xi_k t) z_k
        assert p == pytest.approx(np.concatenate([z.real, z.imag]), abs=1e-9)
    assert tr.conserved < 1e-10 and tr.action_error < 1e-9
    assert "Flow('R4'" in repr(tr)


def test_flow_on_cp2_matches_action():
    tr = hamcheck.flow(cpn(2), [0.37, -1.21], [0.3, 0.1, -0.2, 0.5], 2.0)
    assert tr.action_error < 1e-9 and tr.conserved < 1e-10


def _plane(backwards):
    u1 = LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])], names=["rot"])
    W = jnp.array([[0.0, 1.0], [-1.0, 0.0]])
    s = -1.0 if backwards else 1.0
    # planted when backwards: fields and moment negated together (the moment equation still holds),
    # so only the comparison with the finite action sees that the flow runs the wrong way
    return Model("plane-backwards" if backwards else "plane", 2, form=lambda x: W, algebra=u1,
                 moment=lambda x: s * jnp.array([-(x[0] ** 2 + x[1] ** 2) / 2]),
                 vector_fields=lambda x: s * jnp.array([[-x[1], x[0]]]), action=lambda g, x: g @ x)


def test_flow_check_passes_and_catches_backwards_flow():
    good = hamcheck.check(_plane(False), points=6, only=["flow"])
    assert good.results["flow"].status == "pass" and good.results["flow"].residual < 1e-11
    bad = hamcheck.check(_plane(True), points=6, only=["flow", "moment_map"])
    assert bad.results["moment_map"].status == "pass"
    assert bad.results["flow"].status == "fail"
    assert [f.kind for f in bad.findings if f.check == "flow"] == ["flow-sign"]
    tr = hamcheck.flow(_plane(True), [1.0], [1.0, 0.0], 1.0)
    assert tr.action_error > 0.1  # the integrated flow is exp(-t xi).x


def test_flow_check_skips_without_action():
    u1 = LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])])
    m = Model("fields only", 2, form=lambda x: jnp.array([[0.0, 1.0], [-1.0, 0.0]]), algebra=u1,
              moment=lambda x: jnp.array([-(x[0] ** 2 + x[1] ** 2) / 2]), vector_fields=lambda x: jnp.array([[-x[1], x[0]]]))
    r = hamcheck.check(m, points=2, only=["flow"])
    assert r.results["flow"].status == "skip" and "finite action" in r.results["flow"].message


def test_bad_arguments():
    m = oscillator(1)
    with pytest.raises(UsageError, match="shape"):
        hamcheck.flow(m, [1.0], [1.0, 2.0, 3.0], 1.0)
    with pytest.raises(UsageError, match="increasing"):
        hamcheck.flow(m, [1.0], [1.0, 2.0], [2.0, 1.0])
