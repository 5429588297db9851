"""The report schema (version 2) is pinned here; docs/report-schema.md documents it.

Adding a field means adding it to the pinned sets below (and to the docs);
renaming or removing one means bumping SCHEMA_VERSION.

Reference values: the plane R^2 with omega = dx ^ dy and the rotation group has
mu = -(x^2 + y^2)/2 in the project's convention (docs/references.md, 
row F1, "standard"); flipping its sign is the planted mistake.
"""

import csv
import io
import json
import math

import jax.numpy as jnp
import numpy as np
import pytest

import hamcheck
from hamcheck.report import (
    CSV_COLUMNS,
    OUTCOME_STATUSES,
    SCHEMA_VERSION,
    CheckResult,
    Finding,
    Outcome,
    Report,
    RunReport,
)

REPORT_KEYS = {
    "schema", "model", "source", "seed", "points", "derivatives", "passed", "seconds",
    "results", "findings", "diagnoses", "convention",
}
RESULT_KEYS = {
    "name", "status", "residual", "tolerance", "worst_point", "points", "message", "statement", "replay", "compare",
}
FINDING_KEYS = {"kind", "check", "message", "data", "replay"}
RUN_KEYS = {"schema", "kind", "hamcheck", "options", "seconds", "counts", "exit_code", "outcomes", "reports"}
OUTCOME_KEYS = {"file", "model", "status", "failing_checks", "findings", "message", "replay", "seconds"}


def _plane(sign):
    u1 = hamcheck.LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])], names=["rot"])
    return hamcheck.Model(
        "plane" if sign > 0 else "plane-flipped", 2, form=lambda x: jnp.array([[0.0, 1.0], [-1.0, 0.0]]),
        algebra=u1, moment=lambda x: sign * jnp.array([-(x[0] ** 2 + x[1] ** 2) / 2]),
        action=lambda g, x: g @ x,
    )


@pytest.fixture(scope="module")
def flipped_report():
    """A real report with a failure and a finding (one jit compile for the whole module)."""
    model = _plane(-1.0)
    report = hamcheck.check(model, points=5, seed=3, only=["antisymmetric", "moment_map"])
    return report


def _handmade(status="fail", sign=1, flow=1):
    # moment_map carries no statement: a hand-made result is stated from the registry in the report's convention
    results = {
        "closed": CheckResult("closed", "pass", 1e-16, 1e-12, (0.1, 0.2), "holds at 4 points", 4, "d omega = 0"),
        "moment_map": CheckResult(
            "moment_map", status, 2.0 if status == "fail" else 1e-16, 1e-12, (0.5, -1.0),
            "mu has the opposite sign | really", 4, "", "hamcheck check m.py --model m --only moment_map",
        ),
    }
    findings = (Finding("moment-sign", "negate mu", {"ratio": np.float64(-1.0)}, "moment_map", "replay it"),) if status == "fail" else ()
    return Report("m", "m.py", 7, 4, "autodiff", results, findings, (), 0.25, (sign, flow))


def test_schema_version_is_two():
    assert SCHEMA_VERSION == 2


def test_real_report_dict_has_exactly_the_pinned_keys(flipped_report):
    d = flipped_report.to_dict()
    assert set(d) == REPORT_KEYS
    assert d["schema"] == SCHEMA_VERSION
    for r in d["results"].values():
        assert set(r) == RESULT_KEYS
    assert d["findings"], "the planted sign mistake must produce a finding"
    for f in d["findings"]:
        assert set(f) == FINDING_KEYS
    json.dumps(d)  # plain JSON: no numpy scalars or arrays left


def test_real_report_finds_the_planted_sign(flipped_report):
    r = flipped_report.results["moment_map"]
    assert r.status == "fail"
    assert r.residual == pytest.approx(1.0, rel=1e-9)  # |(-d mu) - d mu| / max(|d mu|) = 2/2, see module docstring
    assert [f.kind for f in flipped_report.findings] == ["moment-sign"]
    assert flipped_report.results["antisymmetric"].status == "pass"


def test_json_round_trip_keeps_every_field(flipped_report):
    back = Report.from_dict(json.loads(flipped_report.to_json()))
    assert back.to_dict() == json.loads(flipped_report.to_json())


def test_from_dict_refuses_another_schema_version(flipped_report):
    d = flipped_report.to_dict() | {"schema": 99}
    with pytest.raises(ValueError, match="schema 99"):
        Report.from_dict(d)
    with pytest.raises(hamcheck.UsageError, match="schema 99"):
        Report.from_dict(d)


def test_from_dict_names_a_missing_field(flipped_report):
    d = flipped_report.to_dict()
    del d["results"]["moment_map"]["status"]
    with pytest.raises(hamcheck.HamcheckError, match="lacks the field 'status'"):
        Report.from_dict(d)
    with pytest.raises(hamcheck.UsageError, match="lacks the field 'seed'"):
        Report.from_dict({k: v for k, v in flipped_report.to_dict().items() if k != "seed"})
    with pytest.raises(hamcheck.UsageError, match="JSON object"):
        Report.from_dict([1, 2])


def _version_1(report_dict):
    """A version-1 document: no compare, statements in the default convention (as hamcheck 0.1 wrote them)."""
    d = json.loads(json.dumps(report_dict)) | {"schema": 1}
    for r in d["results"].values():
        del r["compare"]
        r["statement"] = "the moment equation"
    return d


def test_version_1_documents_are_migrated(flipped_report):
    old = _version_1(flipped_report.to_dict())
    back = Report.from_dict(old)
    assert back.to_dict()["schema"] == SCHEMA_VERSION
    assert back.results == flipped_report.results  # comparison and statement restored from the registry
    # nondegenerate compared *above* its tolerance in version 1 too; the migration keeps that
    nd = {"name": "nondegenerate", "status": "pass", "residual": 0.5, "tolerance": 1e-10, "points": 3}
    v1 = {"schema": 1, "model": "m", "seed": 0, "points": 3, "results": {"nondegenerate": nd, "kks_base_form": nd | {
        "name": "kks_base_form", "statement": "omega at the base point is the mode formula"}}}
    migrated = Report.from_dict(v1).results
    assert migrated["nondegenerate"].compare == "above" and "must stay ABOVE" in migrated["nondegenerate"].statement
    assert migrated["kks_base_form"].compare == "below"  # a name hamcheck does not know keeps its own statement
    assert migrated["kks_base_form"].statement == "omega at the base point is the mode formula"


def test_comparison_direction_is_data_not_a_name():
    above = CheckResult("margin", "pass", 0.5, 1e-10, None, "", 3, compare="above")
    assert repr(above) == "CheckResult(margin: pass, residual=5.0e-01 >= 1.0e-10, points=3)"
    below = CheckResult("nondegenerate", "pass", 0.5, 1e-10, None, "", 3)
    assert "<=" in repr(below)  # the name alone says nothing
    rep = Report("m", None, 0, 3, "autodiff", {"margin": above})
    assert ">= 1.0e-10" in str(rep) and "<=" not in str(rep).split("margin", 1)[1].splitlines()[0]
    assert CheckResult.from_dict(above.to_dict()) == above
    with pytest.raises(hamcheck.UsageError, match="compare='sideways'"):
        CheckResult("m", "pass", 0.5, 1e-10, None, "", 3, compare="sideways")


def test_non_finite_numbers_survive_json():
    r = CheckResult("closed", "fail", math.inf, 1e-12, None, "inf", 1)
    d = json.loads(json.dumps(r.to_dict()))
    assert d["residual"] == "inf"  # JSON has no inf: written as a string (documented)
    assert CheckResult.from_dict(d).residual == math.inf


def test_convention_is_recorded_and_normalised():
    rep = Report("m", None, 0, 1, "autodiff", {}, convention=hamcheck.Convention(sign=-1))
    assert rep.convention == (-1, 1)
    assert rep.to_dict()["convention"] == {"sign": -1, "flow": 1}
    assert Report("m", None, 0, 1, "autodiff", {}).to_dict()["convention"] is None


def test_markdown_escapes_pipes_and_lists_findings():
    md = _handmade().to_markdown()
    assert "mu has the opposite sign \\| really" in md
    assert "- **moment-sign**: negate mu Replay: `replay it`" in md


# ------------------------------------------------------------- explanations
def test_explain_states_the_condition_in_the_models_convention():
    text = " ".join(_handmade(sign=1).explain().split())  # explanations are wrapped at 96 columns
    assert "with sign = +1: X_a^i omega_ij = d_j mu_a" in text
    assert "worst relative residual 2.00e+00 (tolerance 1.0e-12" in text
    assert "at x = (0.5, -1)" in text
    assert "Likely cause [moment-sign]: negate mu" in text
    assert "Replay: hamcheck check m.py --model m --only moment_map" in text
    # negative control: the opposite convention must change the stated condition
    flipped = " ".join(_handmade(sign=-1).explain().split())
    assert "with sign = -1: X_a^i omega_ij = -d_j mu_a" in flipped
    assert "d_j mu_a for every" not in flipped.replace("-d_j mu_a", "")


def test_explain_equivariance_uses_sign_times_flow():
    rep = Report("m", None, 0, 4, "autodiff", {
        "equivariance": CheckResult("equivariance", "fail", 0.5, 1e-12, (1.0,), "off", 4),
        "action": CheckResult("action", "fail", 2.0, 1e-10, (1.0,), "off", 4),
    }, convention=(1, -1))
    text = " ".join(rep.explain().split())
    assert "sign*flow = -1: omega(X_a, X_b) = -<mu, [e_a, e_b]>" in text  # docs/references.md identity, sign flipped
    assert "(flow = -1): [X_a, X_b] = X_[e_a,e_b]" in text  # left action: [X, Y] = -flow X_[.,.]


def test_explain_renders_the_statement_each_result_carries(flipped_report):
    # a real report states its condition in the model's convention (here the default one)
    text = " ".join(flipped_report.explain().split())
    assert "Condition: the moment equation, with sign = +1: X_a^i omega_ij = d_j mu_a" in text
    # a result made outside the axiom runner (e.g. by cocycles or virasoro) explains itself the same way
    outside = CheckResult("central_ratio", "fail", 0.16, 1e-9, None, "ratio 1/6", 1,
                          "the central term is c/12 times Gelfand-Fuchs", compare="above")
    text = " ".join(Report("m", None, 0, 1, "autodiff", {"central_ratio": outside}).explain().split())
    assert "Condition: the central term is c/12 times Gelfand-Fuchs" in text
    assert "(must be >= 1.0e-09)" in text  # its direction comes from the result, not from its name


def test_explain_is_empty_when_everything_passed():
    assert _handmade(status="pass").explain() == ""


def test_explain_of_a_check_that_could_not_run():
    rep = Report("m", None, 0, 4, "autodiff", {
        "closed": CheckResult("closed", "error", None, 1e-12, None, "could not run: TypeError: bad", 0),
    })
    text = " ".join(rep.explain().split())
    assert "closed (could not run)" in text and "It could not be evaluated: TypeError: bad" in text


# ------------------------------------------------------------------- runs
def _run():
    outcomes = [
        Outcome.of_report("a.py", _handmade(status="pass")),
        Outcome.of_report("b.py", _handmade()),
        Outcome("c.py", None, "load-error", message="line 3: syntax error: invalid syntax", replay="hamcheck check c.py"),
        Outcome("d, e.py", None, "timeout", message='time limit of 5 s reached, "quoted"'),
    ]
    return RunReport(outcomes, [_handmade(status="pass"), _handmade()], {"points": 4, "isolate": True}, 1.5)


def test_run_dict_has_exactly_the_pinned_keys():
    d = _run().to_dict()
    assert set(d) == RUN_KEYS and d["kind"] == "run" and d["schema"] == SCHEMA_VERSION
    assert d["hamcheck"] == hamcheck.__version__
    assert all(set(o) == OUTCOME_KEYS for o in d["outcomes"])
    assert set(d["counts"]) == set(OUTCOME_STATUSES)
    assert d["counts"]["pass"] == 1 and d["counts"]["fail"] == 1 and d["counts"]["timeout"] == 1
    assert all(set(r) == REPORT_KEYS for r in d["reports"])
    json.dumps(d)


def test_outcome_of_a_failing_report_carries_checks_findings_and_replay():
    o = Outcome.of_report("b.py", _handmade())
    assert o.status == "fail" and o.failing_checks == ("moment_map",) and o.findings == ("moment-sign",)
    assert o.replay == "hamcheck check m.py --model m --only moment_map"
    assert Outcome.from_dict(o.to_dict()) == o


def test_outcome_refuses_an_unknown_status():
    with pytest.raises(ValueError, match="not one of"):
        Outcome("a.py", None, "exploded")
    with pytest.raises(hamcheck.UsageError, match="lacks the field 'status'"):
        Outcome.from_dict({"file": "a.py"})


@pytest.mark.parametrize(
    "statuses, code",
    # a file that could not be checked is a failed file of the batch (1); 2 only when nothing was checked
    [(["pass"], 0), (["pass", "fail"], 1), (["fail", "timeout"], 1), (["no-model"], 1), ([], 2)],
)
def test_exit_code_of_a_run(statuses, code):
    outcomes = [Outcome(f"{i}.py", "m", s) for i, s in enumerate(statuses)]
    assert RunReport(outcomes).exit_code == code


def test_csv_columns_and_quoting():
    rows = list(csv.reader(io.StringIO(_run().to_csv())))  # common practice: csv module round trip
    assert tuple(rows[0]) == CSV_COLUMNS
    assert len(rows) == 5
    d = dict(zip(CSV_COLUMNS, rows[4]))
    assert d["file"] == "d, e.py" and d["message"] == 'time limit of 5 s reached, "quoted"'
    assert dict(zip(CSV_COLUMNS, rows[2]))["failing_checks"] == "moment_map"


def test_summary_table_and_markdown_of_a_run():
    run = _run()
    text = run.summary()
    assert text.splitlines()[1].split() == ["file", "model", "result", "failing", "checks", "findings", "note"]
    assert "LOAD-ERROR" in text and "TIMEOUT" in text
    assert text.splitlines()[-1] == "1 of 4 passed; 1 failed; 2 could not be checked"
    md = run.to_markdown(explain=True)
    assert md.startswith("# hamcheck results") and "| c.py | - | load-error |" in md
    assert md.count("```text") == 1  # only the failing report is explained
