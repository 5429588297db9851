"""The public API is pinned: adding or removing a name is a deliberate act."""

import hamcheck

EXPECTED = {
    "CHECK_NAMES",
    "CheckResult",
    "Convention",
    "FINDING_KINDS",
    "FINITE_DIFFERENCE_TOLERANCES",
    "Finding",
    "ConvergenceError",
    "FrozenModelError",
    "HamcheckError",
    "LoadError",
    "LieAlgebra",
    "Model",
    "ModelError",
    "Report",
    "Settings",
    "TOLERANCES",
    "Tolerances",
    "UsageError",
    "check",
    # consequences of the axioms (issue 3)
    "coadjoint_orbit",
    "fixed_points",
    "flow",
    "lattice_count",
    "localization",
    "moment_image",
    "reduce",
    # families of models over parameter grids (scale-out issue)
    "SweepTable",
    "sweep",
}


def test_public_names_are_pinned():
    assert set(hamcheck.__all__) == EXPECTED
    for name in hamcheck.__all__:
        assert hasattr(hamcheck, name)


def test_finding_kinds_cover_the_issue_list():
    required = {
        "moment-sign", "moment-scale", "moment-offset", "central-cocycle", "right-action", "bracket-sign",
        "not-closed", "not-invariant", "degenerate", "not-antisymmetric", "non-finite",
    }
    assert required <= set(hamcheck.FINDING_KINDS)


def test_every_error_hamcheck_raises_on_purpose_has_one_root():
    from hamcheck import errors

    for name in errors.__all__:
        assert issubclass(getattr(errors, name), hamcheck.HamcheckError), name


def test_importing_enables_float64_only():
    import jax

    assert jax.config.read("jax_enable_x64")
    assert jax.numpy.zeros(1).dtype == jax.numpy.float64
