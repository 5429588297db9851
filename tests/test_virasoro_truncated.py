"""Tests of hamcheck.virasoro.truncated: the truncated algebra and a user's truncated action.

References: docs/references.md, Virasoro (key identity, Gelfand–Fuchs not a coboundary; from memory).
The cocycle machinery itself is tested in test_cocycles.py.
"""

import pytest

import hamcheck
from hamcheck import circle, virasoro


def test_truncated_modes_and_user_action_negative_controls():
    assert virasoro.truncated_algebra(4, c=1.0).modes.tolist() == [0, 1, 1, 2, 2, 3, 3, 4, 4]
    # opposite bracket sign: caught by the cocycle check's action (test_cocycles has the details)
    alg = virasoro.truncated_algebra(6, 1.0)
    rep = virasoro.check_user_action(lambda X, Y: -alg.bracket(X, Y), alg.pairing, alg.action, 6, 1.0)
    assert rep.results["action"].status == "fail" and "bracket-sign" in [f.kind for f in rep.findings]
    rep12 = virasoro.check_user_action(alg.bracket, alg.pairing, virasoro.TruncatedVirasoro(6, 1.0, 1 / 12).action, 6, 1.0)
    assert rep12.results["central_ratio"].status == "fail" and circle.central_ratio(rep12) == pytest.approx(1 / 6, rel=1e-10)
    assert isinstance(rep12, hamcheck.Report) and "virasoro.check_user_action" in rep12.results["central_ratio"].replay


def test_bad_truncation_is_one_clear_message():
    with pytest.raises(hamcheck.UsageError, match="K must be an integer >= 3"):
        virasoro.truncated_algebra(2, 1.0)
