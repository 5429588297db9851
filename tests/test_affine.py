"""hamcheck.affine is a deprecated alias of hamcheck.loop_groups for one release: same names, one warning."""

import importlib
import sys
import warnings

import pytest

from hamcheck import circle, loop_groups

#: today's names of the alias (the former affine.__all__, kept as they were)
FORMER = {
    "MatrixGroup", "SU2", "SO3", "U1", "SU", "Loop", "grid", "constant_connection", "gauge_action",
    "infinitesimal_action", "pairing", "central_cocycle", "extension_adjoint", "Holonomy", "holonomy", "su2_class",
    "stabilizer_dimension_fourier", "stabilizer_dimension_transport", "STABILIZER_RTOL", "HOLONOMY_TOL",
    "GAUGE_ACTION_TOL", "PAIRING_TOL", "check_gauge_action", "su2_Ad", "su2_dexp", "ChartFormulas", "STANDARD",
    "chart_labels", "degenerate_modes", "kks_form_at_base", "orbit_model", "OrbitResolution",
    "orbit_resolution_study", "summarize_resolution", "TruncatedLoopAlgebra", "truncated_algebra",
    "check_user_action", "classify", "classify_file", "format_classification", "add_holonomy_parser",
}


def fresh_affine():
    sys.modules.pop("hamcheck.affine", None)
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        module = importlib.import_module("hamcheck.affine")
    return module, seen


def test_alias_warns_once_and_keeps_every_former_name():
    affine, seen = fresh_affine()
    assert [w.category for w in seen if "hamcheck.affine" in str(w.message)] == [DeprecationWarning]
    assert FORMER <= set(affine.__all__)
    for name in FORMER:
        assert hasattr(affine, name), name
    # the same objects, not copies
    assert affine.orbit_model is loop_groups.orbit_model and affine.check_gauge_action is loop_groups.check_gauge_action
    assert affine.HOLONOMY_TOL == loop_groups.TOLERANCES.holonomy and affine.STABILIZER_RTOL == circle.TOLERANCES.stabilizer


def test_former_virasoro_and_circle_constants_warn_and_map_to_the_records():
    from hamcheck import virasoro

    with pytest.warns(DeprecationWarning, match="TOLERANCES.monodromy"):
        assert virasoro.MONODROMY_TOL == virasoro.TOLERANCES.monodromy
    with pytest.warns(DeprecationWarning, match="TOLERANCES.round_off_floor"):
        assert circle.ROUND_OFF_FLOOR == circle.TOLERANCES.round_off_floor
    with pytest.raises(AttributeError):
        virasoro.NO_SUCH_NAME  # noqa: B018
