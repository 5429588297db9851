"""hamcheck.diagnose: Evidence in, Diagnosis out. (Each check's own diagnoses: tests/test_check_*.py.)"""

import numpy as np

import hamcheck

from hamcheck.diagnose import Diagnosis, Evidence, at, fails_at_worst, vec


def _evidence(failed):
    pts = np.array([[0.5, 1.0], [2.0, -3.25]])
    return Evidence(None, pts, {}, np.array([1e-16, 0.75]), 1e-12, None, failed, 1)


def test_one_cause_diagnosis_names_the_worst_point():
    diagnose = fails_at_worst("bad", "planted", "residual {r:.2f} {where}")
    d = diagnose(_evidence(True))
    assert d.note == "bad"
    ((kind, message, data),) = d.findings
    assert kind == "planted" and message == "residual 0.75 at x = (2, -3.25)"
    assert data["residual"] == 0.75 and list(data["point"]) == [2.0, -3.25]
    assert diagnose(_evidence(False)) == Diagnosis()  # a passing check has nothing to say


def test_formatting_helpers():
    assert vec([0.123456, 2]) == "(0.1235, 2)"
    assert at(_evidence(True)) == "at x = (2, -3.25)"


def test_entries_zero_to_round_off_print_as_zero():
    # float64 eps = 2.2e-16 (IEEE 754): -3.925e-17 beside 0.3 is a fraction of one round-off of the scale
    assert vec([0.3, -3.925e-17, -0.2]) == "(0.3, 0, -0.2)"
    assert vec([-0.0, 1.0]) == "(0, 1)"
    # relative to the vector's own scale: a uniformly tiny vector keeps its digits
    assert vec([1e-20, -2.5e-20]) == "(1e-20, -2.5e-20)"
    # a small but resolved entry (1e-9 of the scale, far above round-off) is kept
    assert vec([1.0, 1e-9]) == "(1, 1e-09)"
    assert vec([np.nan, 1e-30, 2.0]) == "(nan, 0, 2)"
    assert at(Evidence(None, np.array([[0.5, 1e-18]]), {}, np.array([1.0]), 1e-12, None, True, 0)) == "at x = (0.5, 0)"


def test_recovered_offset_prints_exact_zero(broken_mod):
    # the sphere's planted offset (0.3, 0, -0.2) (models/broken): least squares returns ~1e-17 for the 0
    report = hamcheck.check(broken_mod.shifted, points=4, only=["equivariance"])
    (finding,) = report.findings
    assert "lambda = (0.3, 0, -0.2)" in finding.message, finding.message
