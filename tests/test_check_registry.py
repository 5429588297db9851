"""hamcheck.checks._registry: the checks in order, their lookup, and the finding kinds they report."""

import importlib

import pytest

import hamcheck
from hamcheck.checks import CHECK_NAMES, CHECKS, FINDING_KINDS, check_named
from hamcheck.checks._registry import MODULES, POINT_FAULT_KINDS


def test_check_names_are_the_documented_ones():
    assert CHECK_NAMES == (
        "antisymmetric", "closed", "nondegenerate", "action", "invariant", "moment_map", "equivariance",
        "group_equivariance", "flow",
    )


def test_one_module_per_check():
    for module, check in zip(MODULES, CHECKS):
        assert importlib.import_module(f"hamcheck.checks.{module}").CHECK is check
    assert len(set(CHECK_NAMES)) == len(CHECKS)


def test_lookup_by_name_and_unknown_names():
    assert check_named("flow").kernel.__module__ == "hamcheck.checks.hamiltonian_flow"
    with pytest.raises(hamcheck.errors.UnknownNameError, match="unknown check 'closedness'"):
        check_named("closedness")
    with pytest.raises(KeyError):  # still a KeyError for callers who think in builtins
        check_named("closedness")
    with pytest.raises(hamcheck.HamcheckError):
        check_named("")


def test_finding_kinds_are_collected_from_the_checks():
    # README's list of findings (section "Checks and findings") plus flow-sign
    documented = {
        "moment-sign", "moment-scale", "moment-offset", "central-cocycle", "right-action", "bracket-sign",
        "fields-mismatch", "not-closed", "not-invariant", "degenerate", "not-antisymmetric", "non-finite",
        "raised", "flow-sign",
    }
    assert set(FINDING_KINDS) == documented and len(FINDING_KINDS) == len(documented)
    assert set(POINT_FAULT_KINDS) <= set(FINDING_KINDS)
    assert hamcheck.FINDING_KINDS == FINDING_KINDS
