"""The public names of the circle toolkit and of both families are pinned: changing them is a deliberate act."""

from hamcheck import circle, loop_groups, virasoro

CIRCLE = {
    "grid", "wavenumbers", "integrate", "mean", "derivative", "real_modes", "resample", "mode_vector_to_samples",
    "samples_to_mode_vector", "vector_modes", "spectral_tail", "resolution_warning", "Periodic", "LoadedSamples",
    "load_periodic_samples", "ClassificationInput", "read_input", "coupling", "Propagation", "propagate", "transport",
    "ordered_product", "prefix_products", "expm_traceless2", "magnus_steps", "magnus6_exponent", "ToleranceRecord", "Kernel", "kernel", "subspace_distance",
    "OrbitClassification", "ResolutionStudy", "resolution_study", "ChartResolution", "check_resolution_study",
    "summarize_resolution", "fit_decay", "cocycles", "check_coadjoint_action", "central_ratio", "is_coboundary",
    "CircleTolerances", "TOLERANCES",
}
VIRASORO = {
    "StabilityChart", "stability_chart",  # the stability chart of Hill potentials (scale-out issue)
    "Diffeo", "schwarzian", "schwarzian_from_derivatives", "transform", "delta", "bracket", "gelfand_fuchs",
    "TruncatedVirasoro", "truncated_algebra", "check_user_action", "Monodromy", "hill_generator", "monodromy",
    "rotation_number", "stabilizer_fourier", "stabilizer_ode", "constant_representative", "classify", "classify_file",
    "format_classification", "potential_from_developing_map", "developing_map", "orbit_model", "VirasoroOrbitChart",
    "kks_base_form", "base_form_residual", "base_form_check", "chart_resolution_study", "rotation_weights",
    "zeta_one_loop", "counterterm_sum", "counterterm_limit", "VirasoroTolerances", "TOLERANCES",
}
LOOP_GROUPS = {
    "MatrixGroup", "SU2", "SO3", "U1", "SU", "Loop", "grid", "constant_connection", "gauge_action",
    "infinitesimal_action", "pairing", "central_cocycle", "extension_adjoint", "check_gauge_action", "Holonomy",
    "holonomy", "su2_class", "stabilizer_dimension_fourier", "stabilizer_dimension_transport", "classify",
    "classify_file", "format_classification", "su2_Ad", "su2_dexp", "ChartFormulas", "STANDARD", "chart_labels",
    "degenerate_modes", "kks_form_at_base", "orbit_model", "LoopOrbitChart", "OrbitResolution",
    "orbit_resolution_study", "summarize_resolution", "TruncatedLoopAlgebra", "truncated_algebra",
    "check_user_action", "LoopGroupTolerances", "TOLERANCES",
}


def test_public_names_are_pinned():
    for module, expected in ((circle, CIRCLE), (virasoro, VIRASORO), (loop_groups, LOOP_GROUPS)):
        assert set(module.__all__) == expected, module.__name__
        assert len(module.__all__) == len(set(module.__all__))
        for name in module.__all__:
            assert hasattr(module, name), f"{module.__name__}.{name}"


def test_tolerance_records_are_frozen_and_documented():
    import dataclasses

    import pytest

    for record in (circle.TOLERANCES, virasoro.TOLERANCES, loop_groups.TOLERANCES):
        with pytest.raises(dataclasses.FrozenInstanceError):
            record.__setattr__(dataclasses.fields(record)[0].name, 1.0)
        doc = type(record).__doc__
        for f in dataclasses.fields(record):
            assert f.name in doc, f"{type(record).__name__}.{f.name} has no reason in the docstring"
