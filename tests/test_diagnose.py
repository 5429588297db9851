"""hamcheck.diagnose: Evidence in, Diagnosis out. (Each check's own diagnoses: tests/test_check_*.py.)"""

import numpy as np

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
