"""The pytest plugin of hamcheck, loaded through the ``pytest11`` entry point.

Kept outside the ``hamcheck`` package on purpose: loading it at pytest start-up
imports only pytest and the standard library, so a project that merely has
hamcheck installed does not pay for importing jax. hamcheck (and jax) are
imported when a test first uses the plugin: a module declaring
``hamcheck_models``, or a test marked ``@pytest.mark.hamcheck(...)``. The
assertion helpers live in :mod:`hamcheck.testing`.
"""

from __future__ import annotations

import sys

import pytest

__all__ = ["HamiltonianCheckFailed"]

#: name of the module-level variable that declares models to check
MODELS_VARIABLE = "hamcheck_models"
#: name of the optional module-level dict of options for those models
OPTIONS_VARIABLE = "hamcheck_options"


class HamiltonianCheckFailed(AssertionError):
    """Raised when a model or result fails; ``.report`` is the failing :class:`hamcheck.Report`."""

    def __init__(self, message: str, report):
        super().__init__(message)
        self.report = report


# --------------------------------------------------------------------- plugin
def pytest_addoption(parser):
    group = parser.getgroup("hamcheck", "hamcheck: checks of Hamiltonian G-spaces")
    group.addoption("--hamcheck-points", type=int, default=None, metavar="N",
                    help="points per model for checks run by the hamcheck plugin (overrides the tests' own)")
    group.addoption("--hamcheck-seed", type=int, default=None, metavar="S",
                    help="seed for checks run by the hamcheck plugin (overrides the tests' own)")


def pytest_configure(config):
    config.addinivalue_line(
        "markers",
        "hamcheck(*models, points=..., seed=..., only=...): run the test once per model with its "
        "hamcheck report as the `hamcheck_report` fixture",
    )


def _options(config, options: dict) -> dict:
    options = dict(options)
    for name in ("points", "seed"):
        value = config.getoption(f"hamcheck_{name}", None)
        if value is not None:
            options[name] = value
    return options


_REPORTS: dict = {}


def _cached_check(model, options: dict):
    """One report per (model, options) per session: each check compiles a jit program."""
    from hamcheck.suite import check
    from hamcheck.testing import _with_convention

    key = (id(model), repr(sorted(options.items())))
    if key not in _REPORTS:
        _REPORTS[key] = (model, _with_convention(check(model, **options), model))  # model kept alive: id() stays unique
    return _REPORTS[key][1]


def _fail(report):
    from hamcheck.testing import failure_message

    raise HamiltonianCheckFailed(failure_message(report), report)


def _usage_error(message):
    from hamcheck.errors import UsageError

    return UsageError(message)


def _is_model(obj) -> bool:
    mod = sys.modules.get("hamcheck.model")  # a Model exists only if hamcheck was imported
    return mod is not None and isinstance(obj, mod.Model)


def _declared(obj):
    """Models from a ``hamcheck_models`` value: one model, a list/tuple, or a dict name -> model."""
    values = list(obj.values()) if isinstance(obj, dict) else list(obj) if isinstance(obj, (list, tuple)) else [obj]
    return values


class HamcheckItem(pytest.Item):
    """One declared model, checked as one test."""

    def __init__(self, *, model, options, **kwargs):
        super().__init__(**kwargs)
        self.model = model
        self.options = options

    def runtest(self):
        if not _is_model(self.model):
            raise _usage_error(f"{MODELS_VARIABLE} must hold hamcheck.Model objects; got {type(self.model).__name__}")
        report = _cached_check(self.model, _options(self.config, self.options))
        if not report.passed:
            _fail(report)

    def repr_failure(self, excinfo, style=None):
        if isinstance(excinfo.value, (HamiltonianCheckFailed,)) or type(excinfo.value).__name__ == "UsageError":
            return str(excinfo.value)
        return super().repr_failure(excinfo)

    def reportinfo(self):
        return self.path, None, f"hamcheck: {getattr(self.model, 'name', self.name)}"


@pytest.hookimpl(tryfirst=True)
def pytest_pycollect_makeitem(collector, name, obj):
    if name != MODELS_VARIABLE or not isinstance(collector, pytest.Module):
        return None
    options = dict(getattr(collector.obj, OPTIONS_VARIABLE, {}) or {})
    items, seen = [], {}
    for i, model in enumerate(_declared(obj)):
        label = getattr(model, "name", f"#{i}")
        seen[label] = seen.get(label, 0) + 1
        if seen[label] > 1:  # two models with the same name still get distinct test ids
            label = f"{label}-{seen[label]}"
        items.append(HamcheckItem.from_parent(collector, name=f"hamcheck[{label}]", model=model, options=options))
    return items


def pytest_generate_tests(metafunc):
    if "hamcheck_report" not in metafunc.fixturenames:
        return
    marker = metafunc.definition.get_closest_marker("hamcheck")
    if marker is None or not marker.args:
        pytest.fail(
            f"{metafunc.definition.nodeid} uses the hamcheck_report fixture but has no "
            "@pytest.mark.hamcheck(model, ...) marker naming the models to check",
            pytrace=False,
        )
    models = list(marker.args)
    ids = [getattr(m, "name", f"model{i}") for i, m in enumerate(models)]
    metafunc.parametrize("_hamcheck_model", models, ids=ids)


@pytest.fixture
def _hamcheck_model(request):
    return request.param


@pytest.fixture
def hamcheck_report(request, _hamcheck_model):
    """The :class:`hamcheck.Report` of the model given by the ``hamcheck`` marker (run once per session)."""
    if not _is_model(_hamcheck_model):
        raise _usage_error(f"@pytest.mark.hamcheck takes hamcheck.Model objects; got {type(_hamcheck_model).__name__}")
    marker = request.node.get_closest_marker("hamcheck")
    return _cached_check(_hamcheck_model, _options(request.config, marker.kwargs))
