"""Helpers shared by the tests of the check modules (tests/test_check_*.py); not a test module.

The planted mistakes are those of models/broken/planted_mistakes.py; the
sign/scale/offset/cocycle/right-action expectations are those of docs/references.md
("How planted mistakes show on the sphere", checked numerically there).
"""

import hamcheck

#: points of a negative control run with only=[check]
CONTROL_POINTS = 8
#: points of a full check of a bundled broken model
DIAGNOSIS_POINTS = 12


def kinds(report):
    return {f.kind for f in report.findings}


def assert_negative_control(broken_mod, check, broken):
    """The planted mistake ``broken`` fails ``check`` alone, at a named point."""
    report = hamcheck.check(getattr(broken_mod, broken), points=CONTROL_POINTS, only=[check])
    assert report.results[check].status == "fail", str(report)
    assert report.results[check].worst_point is not None
    return report


def assert_diagnosed(broken_mod, name, expected):
    """A full check of the bundled broken model ``name`` fails with (at least) the ``expected`` finding kinds."""
    report = hamcheck.check(getattr(broken_mod, name), points=DIAGNOSIS_POINTS)
    assert not report.passed
    assert expected <= kinds(report), str(report)
    for f in report.findings:
        assert "--seed 0" in f.replay and "planted_mistakes.py" in f.replay  # replayable
    return report
