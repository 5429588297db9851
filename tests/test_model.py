"""Model declaration: eager validation with clear messages; the finite-difference fallback."""

import jax.numpy as jnp
import numpy as np
import pytest

import hamcheck
from hamcheck import Convention, LieAlgebra, Model, ModelError

U1 = LieAlgebra.from_matrices([np.array([[0.0, -1.0], [1.0, 0.0]])], names=["rot"])
J = np.array([[0.0, 1.0], [-1.0, 0.0]])


def plane(**kw):
    args = dict(
        form=lambda x: jnp.asarray(J),
        algebra=U1,
        moment=lambda x: jnp.array([-(x @ x) / 2]),
        action=lambda g, x: g @ x,
    )
    args.update(kw)
    return Model("plane", 2, **args)


def test_form_shape_error_names_function_and_shapes():
    with pytest.raises(ModelError) as err:
        plane(form=lambda x: jnp.zeros((3, 3)))
    assert "form(x) returned shape (3, 3); expected (2, 2) for dim=2" in str(err.value)


@pytest.mark.parametrize(
    "override, message",
    [
        ({"moment": lambda x: jnp.zeros(2)}, "moment(x) returned shape (2,); expected (1,)"),
        ({"vector_fields": lambda x: jnp.zeros(2)}, "vector_fields(x) returned shape (2,); expected (1, 2)"),
        ({"action": lambda g, x: jnp.zeros(3)}, "action(g, x) returned shape (3,); expected (2,)"),
        ({"sample": lambda rng: np.zeros(3)}, "sample(rng) returned shape (3,); expected (2,)"),
        ({"form": lambda x: 1j * jnp.asarray(J)}, "form(x) returned complex values"),
        ({"moment": lambda x: 1 / 0}, "moment(x) raised ZeroDivisionError"),
    ],
)
def test_each_bad_function_gets_one_clear_message(override, message):
    with pytest.raises(ModelError, match=message.replace("(", r"\(").replace(")", r"\)")):
        plane(**override)


def test_declaration_errors():
    with pytest.raises(ModelError, match="vector_fields"):
        plane(action=None)
    with pytest.raises(ModelError, match="dim must be a positive integer"):
        Model("x", 0, lambda x: x, U1, lambda x: x, action=lambda g, x: x)
    with pytest.raises(ModelError, match="LieAlgebra"):
        Model("x", 2, lambda x: jnp.asarray(J), "so3", lambda x: x, action=lambda g, x: x)
    with pytest.raises(ModelError, match="sign must be"):
        Convention(sign=2)
    assert isinstance(ModelError("x"), ValueError) and isinstance(ModelError("x"), hamcheck.HamcheckError)


def test_numpy_function_is_refused_with_the_fix():
    with pytest.raises(ModelError) as err:
        plane(moment=lambda x: np.array([-float(np.dot(x, x)) / 2]))
    text = str(err.value)
    assert "moment(x) cannot be traced by jax" in text
    assert "jax.numpy" in text and 'derivatives="finite-differences"' in text
    assert "\n" not in text  # one line


# --- the documented finite-difference fallback, on a model written in plain numpy


def numpy_sphere(moment_sign=1.0):
    so3 = LieAlgebra.from_matrices(
        [
            np.array([[0.0, 0, 0], [0, 0, -1], [0, 1, 0]]),
            np.array([[0.0, 0, 1], [0, 0, 0], [-1, 0, 0]]),
            np.array([[0.0, -1, 0], [1, 0, 0], [0, 0, 0]]),
        ]
    )

    def to_sphere(x):
        r2 = float(x @ x)
        return np.array([2 * x[0], 2 * x[1], 1 - r2]) / (1 + r2)

    return Model(
        "numpy sphere",
        2,
        form=lambda x: 4 / (1 + float(x @ x)) ** 2 * J,
        algebra=so3,
        moment=lambda x: moment_sign * to_sphere(x),
        action=lambda g, x: (lambda p: p[:2] / (1 + p[2]))(g @ to_sphere(x)),
        derivatives="finite-differences",
    )


def test_finite_differences_pass_a_correct_numpy_model_and_say_so():
    report = hamcheck.check(numpy_sphere(), points=6)
    assert report.passed, str(report)
    assert report.derivatives == "finite-differences"
    assert any(d.kind == "finite-differences" for d in report.diagnoses)
    # widened, documented tolerances (FINITE_DIFFERENCE_TOLERANCES), not the autodiff ones
    assert report.results["moment_map"].tolerance == hamcheck.FINITE_DIFFERENCE_TOLERANCES.moment_map


def test_finite_differences_still_catch_a_sign_error():
    report = hamcheck.check(numpy_sphere(-1.0), points=6, only=["moment_map"])
    assert not report.passed
    assert [f.kind for f in report.findings] == ["moment-sign"]


def test_source_file_is_recorded_for_replay():
    assert plane().source.endswith("test_model.py")
    assert "Model(name='plane', dim=2" in repr(plane())


def test_a_declared_model_is_immutable():
    m = plane()
    with pytest.raises(hamcheck.FrozenModelError, match="immutable; use model.replace"):
        m.name = "other"
    with pytest.raises(AttributeError):  # also the builtin a caller would expect
        m.extra = 1
    with pytest.raises(hamcheck.HamcheckError):
        del m.form


def test_replace_changes_metadata_only():
    m = plane(chart_labels=["x", "y"])
    r = m.replace(name="renamed", source="elsewhere.py")
    assert (r.name, r.source, r.chart_labels, m.name) == ("renamed", "elsewhere.py", ("x", "y"), "plane")
    assert r.form is m.form and r.dim == m.dim
    with pytest.raises(ModelError, match="changes only name, source, chart_labels, construction, charts; got form"):
        m.replace(form=lambda x: x)
    with pytest.raises(ModelError, match="chart_labels has 3 entries; expected one per coordinate"):
        plane(chart_labels=["a", "b", "c"])
