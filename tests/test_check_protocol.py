"""hamcheck.checks._base: the Check record is the whole protocol.

A toy check is added the way DEVELOPERS.md says ("To add a check"): the code of
one module (statement, kernel, tolerance, diagnosis, one ``Check``) and one
registry line, here ``monkeypatch`` adding it to the registry's ``CHECKS``.
It then runs through ``hamcheck.check`` like the bundled checks: it passes a
correct model and fails a planted mistake with its finding, replay command,
explanation and comparison direction.

The toy condition: the diagonal of a 2-form's matrix vanishes, omega_ii = 0
(implied by antisymmetry; common practice).
"""

import jax.numpy as jnp
import numpy as np
import pytest

import hamcheck
from hamcheck.checks import _registry
from hamcheck.checks._base import TINY, Check, Tolerance
from hamcheck.diagnose import fails_at_worst


# ---------------------------------------------------------------- the one file's worth of code
def statement(sign, flow):
    return "the diagonal of the form matrix vanishes: omega_ii(x) = 0 for every i."


def zero_diagonal(model, x, probe):
    W = model.form_at(x)
    return {"residual": jnp.max(jnp.abs(jnp.diag(W))) / jnp.maximum(jnp.max(jnp.abs(W)), TINY)}


TOLERANCE = Tolerance(1e-12, "no derivative involved: only round-off of the user's form, <= 3e-16")

ZERO_DIAGONAL = Check(
    "zero_diagonal", statement, zero_diagonal, TOLERANCE,
    diagnose=fails_at_worst(
        "omega has a diagonal", "nonzero-diagonal",
        "omega_ii is {r:.2e} of |omega| {where}. Fix: return A - A^T",
    ),
    finding_kinds=("nonzero-diagonal",),
)


# ---------------------------------------------------------------- the registry line, and its use
@pytest.fixture
def registered(monkeypatch):
    monkeypatch.setattr(_registry, "CHECKS", _registry.CHECKS + (ZERO_DIAGONAL,))


def _plane(diagonal):
    u1 = hamcheck.LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])], names=["rot"])
    W = jnp.array([[diagonal, 1.0], [-1.0, diagonal]])
    return hamcheck.Model(f"plane with diagonal {diagonal}", 2, form=lambda x: W, algebra=u1,
                          moment=lambda x: jnp.array([-(x @ x) / 2]), action=lambda g, x: g @ x)


def test_toy_check_passes_a_correct_model_and_catches_a_planted_mistake(registered):
    good = hamcheck.check(_plane(0.0), points=4, only=["zero_diagonal", "antisymmetric"])
    assert good.passed and good.results["zero_diagonal"].residual == 0.0
    bad = hamcheck.check(_plane(0.25), points=4, only=["zero_diagonal"])
    r = bad.results["zero_diagonal"]
    assert r.status == "fail" and r.residual == pytest.approx(0.25, rel=1e-15)  # 0.25 / max|omega| = 0.25 / 1
    assert r.tolerance == 1e-12 and r.compare == "below" and r.statement == statement(1, 1)
    (finding,) = bad.findings
    assert finding.kind == "nonzero-diagonal" and finding.check == "zero_diagonal"
    assert finding.replay.endswith("--seed 0 --points 4 --only zero_diagonal")
    assert "Condition: the diagonal of the form matrix vanishes" in bad.explain()
    assert hamcheck.checks.check_named("zero_diagonal") is ZERO_DIAGONAL


def test_without_the_registry_line_the_check_is_unknown():
    with pytest.raises(hamcheck.UsageError, match="zero_diagonal"):
        hamcheck.check(_plane(0.0), points=4, only=["zero_diagonal"])


def test_a_check_record_refuses_an_unknown_direction():
    with pytest.raises(hamcheck.UsageError, match="compare='sideways'"):
        Check("toy", statement, zero_diagonal, TOLERANCE, compare="sideways")
    assert repr(ZERO_DIAGONAL) == "Check(zero_diagonal: residual below 1e-12)"


def test_prepare_runs_once_before_the_programs_compile_and_not_for_a_skipped_check(monkeypatch):
    import dataclasses

    from hamcheck import cache
    from hamcheck.checks import run

    events = []
    real_compile = cache.compile_lowered
    monkeypatch.setattr(run, "compile_lowered", lambda low, options=None, **kw: (events.append("compile"), real_compile(low, options, **kw))[1])
    prepared = dataclasses.replace(ZERO_DIAGONAL, prepare=lambda model, settings: events.append(("prepare", model.name)))
    monkeypatch.setattr(_registry, "CHECKS", _registry.CHECKS + (prepared,))
    hamcheck.cache.clear()
    model = _plane(0.0)
    assert hamcheck.check(model, points=4, only=["zero_diagonal"]).passed
    assert events[0] == ("prepare", model.name) and events.count(("prepare", model.name)) == 1 and "compile" in events
    # a check that does not apply is not prepared
    skipped = dataclasses.replace(prepared, applies=lambda model, settings: "planted reason")
    monkeypatch.setattr(_registry, "CHECKS", _registry.CHECKS[:-1] + (skipped,))
    events.clear()
    report = hamcheck.check(model, points=4, only=["zero_diagonal"])
    assert report.results["zero_diagonal"].status == "skip" and not any(e != "compile" for e in events)


def test_import_in_background_imports_and_stays_quiet_on_a_missing_module():
    import sys
    import time

    from hamcheck.checks._base import import_in_background

    sys.modules.pop("colorsys", None)
    import_in_background("colorsys")  # a small standard-library module nothing here imports
    deadline = time.monotonic() + 10
    while "colorsys" not in sys.modules and time.monotonic() < deadline:
        time.sleep(0.01)
    assert "colorsys" in sys.modules
    import_in_background("hamcheck_no_such_module")  # raises nothing here; the importer that needs it will
