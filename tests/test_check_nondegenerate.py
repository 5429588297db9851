"""hamcheck.checks.nondegenerate: the smallest relative singular value must stay ABOVE its tolerance."""

import jax.numpy as jnp
import numpy as np
import pytest

import hamcheck
from check_support import assert_diagnosed, assert_negative_control
from hamcheck import LieAlgebra, Model
from hamcheck.checks.nondegenerate import CHECK, relative_to_typical_scale


def test_negative_control(broken_mod):
    report = assert_negative_control(broken_mod, "nondegenerate", "degenerate")
    assert "search from the" in report.results["nondegenerate"].message  # the search hook ran


def test_bundled_broken_model(broken_mod):
    assert_diagnosed(broken_mod, "degenerate", {"degenerate"})


def test_compares_above_and_the_worst_is_the_smallest():
    assert CHECK.compare == "above" and CHECK.higher_is_better
    assert CHECK.worst(np.array([0.3, 1e-12, 0.9])) == 1
    assert CHECK.passes(1e-10, 1e-10) and not CHECK.passes(9e-11, 1e-10)


def test_ratio_is_taken_against_the_typical_largest_singular_value():
    # a 2x2 antisymmetric matrix has equal singular values (common practice), so s_min/s_max = 1 even where the
    # form shrinks; against the median s_max (here 1) the point where s_max = 1e-3 shows as 1e-3
    out = {"residual": np.array([1.0, 1.0, 1.0]), "smax": np.array([1.0, 2.0, 1e-3])}
    assert relative_to_typical_scale(out) == pytest.approx([1.0, 1.0, 1e-3], rel=1e-15)


def test_nearly_degenerate_form_passes_with_a_trust_note():
    # a constant form with blocks 1 and 1e-8: singular values 1, 1, 1e-8, 1e-8 (block-diagonal, common practice),
    # so the ratio 1e-8 is above the tolerance 1e-10 but below ill_conditioned = 1e-7
    report = hamcheck.check(_slab(1e-8), points=4, only=["nondegenerate"])
    r = report.results["nondegenerate"]
    assert r.status == "pass" and r.compare == "above"
    assert r.residual == pytest.approx(1e-8, rel=1e-6)
    (note,) = [d for d in report.diagnoses if d.kind == "ill-conditioned"]
    assert "lose about 8 digits" in note.message
    # negative control: the same slab thinned to 1e-12 is degenerate for the check
    assert hamcheck.check(_slab(1e-12), points=4, only=["nondegenerate"]).results["nondegenerate"].status == "fail"


def _slab(thickness):
    W = jnp.array([[0.0, 1, 0, 0], [-1, 0, 0, 0], [0, 0, 0, thickness], [0, 0, -thickness, 0]])
    return Model(f"symplectic slab {thickness:g}", 4, form=lambda x: W,
                 algebra=LieAlgebra.from_structure_constants(np.zeros((1, 1, 1))),
                 moment=lambda x: jnp.zeros(1), vector_fields=lambda x: jnp.zeros((1, 4)))
