"""The developing map of method B's q (hamcheck.hyperbolic.developing): the metric it defines, and the direct
test that a root of the monodromy condition is the hyperbolic metric's and not a spurious one."""

import math

import numpy as np
import pytest

from hamcheck import hyperbolic
from hamcheck.errors import ConvergenceError
from hamcheck.hyperbolic import accessory
from hamcheck.hyperbolic._common import as_cones
from hamcheck.hyperbolic.developing import check_root, developing_u
from hamcheck.hyperbolic.quadratic import AccessoryFamily

Z = np.array([0.1 + 0.2j, -0.5, 0.7j, 0.35 - 0.6j, -0.2 - 0.1j])
PAIR = [(-0.4, 0.6 * 2 * math.pi), (0.4, 0.6 * 2 * math.pi)]  # the monodromy condition has several real roots here


@pytest.fixture(scope="module")
def good():
    return hyperbolic.solve_accessory(PAIR)


def test_q_zero_develops_to_the_poincare_disk():
    # q = 0: D is a Moebius map onto a half-plane and u = log(2 / (1 - |z|^2)) (the Poincare disk; from memory)
    u = developing_u(lambda z: 0 * z, [], Z)
    assert np.abs(u - np.log(2 / (1 - np.abs(Z) ** 2))).max() < 1e-12


@pytest.mark.parametrize("alpha, center", [(2.2, 0.3 - 0.45j), (5.0, -0.2 + 0.1j)])
def test_one_cone_develops_to_the_closed_form(alpha, center):
    # the pull-back of the Poincare metric by w^beta, w a disk automorphism (the closed form; from memory)
    m = hyperbolic.cone_disk(alpha, center)
    sol = hyperbolic.solve_accessory([(center, alpha)])
    u = developing_u(sol.q, sol.cones, Z)
    exact = np.array([float(m.u(z.real, z.imag)) for z in Z])
    assert np.abs(u - exact).max() < 1e-11


def test_method_b_metric_equals_method_a_metric_at_interior_points():
    # two independent constructions of one metric: the developing map of B's q and A's Liouville solution
    cones = [(-0.3 + 0.2j, 2.5), (0.35, 4.0)]
    sol = hyperbolic.solve_accessory(cones)
    assert sol.root.hyperbolic and sol.root.undetermined == 0
    a = hyperbolic.method_a(cones)
    uA = np.array([float(a.solution.u(z.real, z.imag)) for z in Z])
    uB = developing_u(sol.q, sol.cones, Z)
    assert np.abs(uA - uB).max() < 1e-5, np.abs(uA - uB)


def _spurious(cones, x0):
    fam = AccessoryFamily.of(as_cones(cones, below_two_pi=True))
    x = accessory._solve(fam, np.full(fam.dim, x0), accessory.PROPAGATOR_TOL)[0]
    return fam, x


@pytest.mark.parametrize("x0", [5.0, 10.0])
def test_spurious_roots_fail_the_half_plane_test(x0, good):
    # planted mistake: roots of the same monodromy condition reached from far starts; their monodromy is real
    # (residual ~1e-15) but the developing map leaves its half-plane, which check_root sees
    fam, x = _spurious(PAIR, x0)
    r = accessory._residual_vector(fam, x, accessory.loops(fam.cones, fam.q(x).singular_points), 1e-13)[0]
    assert np.abs(r).max() < 1e-12
    assert np.abs(fam.residues(x) - good.b).max() > 0.1  # another root
    rc = check_root(fam.q(x), PAIR)
    assert not rc.hyperbolic and len(rc.wrong_sign) > 5, rc
    assert good.root.hyperbolic and check_root(good.q, PAIR).hyperbolic


def test_a_spurious_start_falls_back_to_continuation(good):
    # a neighbouring chart cell's residues may lead to a spurious root: the solver must notice and recover
    fam, x = _spurious(PAIR, 5.0)
    sol = hyperbolic.solve_accessory(PAIR, start=fam.residues(x))
    assert sol.root.hyperbolic
    assert np.abs(sol.b - good.b).max() < 1e-9


def test_only_spurious_roots_is_a_clear_error(monkeypatch):
    # planted: with no continuation (one stage at the final angles) started at a spurious root
    fam, x = _spurious(PAIR, 5.0)
    monkeypatch.setattr(accessory, "CONTINUATION", (1.0,))
    monkeypatch.setattr(accessory, "FINE_CONTINUATION", (1.0,))
    monkeypatch.setattr(AccessoryFamily, "guess", lambda self: x)
    with pytest.raises(ConvergenceError, match="spurious roots"):
        hyperbolic.solve_accessory(PAIR)
