"""pytest integration: ``assert_hamiltonian``, a ``hamcheck`` marker, declared models.

Registered as a pytest plugin through the ``pytest11`` entry point, so a
project that did ``pip install hamcheck`` gets it without any configuration.
Nothing is checked or compiled until a test asks for it; loading the plugin
does import the ``hamcheck`` package (and so jax, ~2-3 s) at pytest start-up.

Three ways to use it
--------------------
1. Call it::

       from hamcheck.testing import assert_hamiltonian
       def test_my_space():
           assert_hamiltonian(my_model, points=16)

   A failure shows the report's table, findings and explanations.

2. Declare models in a test module; each becomes one test item
   ``hamcheck[<model name>]``::

       hamcheck_models = [my_model, my_other_model]
       hamcheck_options = {"points": 16}          # optional

3. Mark a test; it runs once per model and gets the report as a fixture::

       @pytest.mark.hamcheck(my_model, my_other_model, points=16)
       def test_moment_map(hamcheck_report):
           assert hamcheck_report.results["moment_map"].status == "pass"

Command-line options ``--hamcheck-points`` and ``--hamcheck-seed`` override the
defaults of every check the plugin runs (to probe harder in CI, say).

Example
-------
>>> from hamcheck.testing import assert_hamiltonian   # doctest: +SKIP
>>> report = assert_hamiltonian(plane, points=8)      # doctest: +SKIP
>>> report.passed                                     # doctest: +SKIP
True
"""

from __future__ import annotations

import sys

import pytest

__all__ = ["assert_hamiltonian", "HamiltonianCheckFailed"]

#: name of the module-level variable that declares models to check
MODELS_VARIABLE = "hamcheck_models"
#: name of the optional module-level dict of options for those models
OPTIONS_VARIABLE = "hamcheck_options"
_OPTION_NAMES = ("points", "seed", "only", "tolerances", "settings")


class HamiltonianCheckFailed(AssertionError):
    """Raised by :func:`assert_hamiltonian`; ``.report`` is the failing :class:`hamcheck.Report`."""

    def __init__(self, message: str, report):
        super().__init__(message)
        self.report = report


def failure_message(report, convention=None) -> str:
    """The assertion message: table, findings, replay commands and plain explanations."""
    parts = [str(report)]
    explanation = report.explain(convention)
    if explanation:
        parts += ["", explanation]
    return "\n".join(parts)


def assert_hamiltonian(model, **options):
    """Check ``model`` with :func:`hamcheck.check` and fail with the report when any check fails.

    ``options`` are those of :func:`hamcheck.check` (``points``, ``seed``,
    ``only``, ``tolerances``, ``settings``). Returns the report when it passed.

    Example
    -------
    >>> report = assert_hamiltonian(plane, points=8, seed=1)   # doctest: +SKIP
    """
    from .errors import UsageError
    from .model import Model
    from .suite import check

    unknown = sorted(set(options) - set(_OPTION_NAMES))
    if unknown:
        raise UsageError(f"assert_hamiltonian got unknown option(s) {unknown}; expected some of {list(_OPTION_NAMES)}")
    if not isinstance(model, Model):
        raise UsageError(f"assert_hamiltonian takes a hamcheck.Model; got {type(model).__name__}")
    report = _with_convention(check(model, **options), model)
    if not report.passed:
        raise HamiltonianCheckFailed(failure_message(report), report)
    return report


def _with_convention(report, model):
    """The report, recording the model's convention so that ``report.explain()`` states it."""
    import dataclasses

    return dataclasses.replace(report, convention=(model.convention.sign, model.convention.flow))


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
    from .suite import check

    key = (id(model), repr(sorted(options.items())))
    if key not in _REPORTS:
        _REPORTS[key] = (model, _with_convention(check(model, **options), model))  # model kept alive: id() stays unique
    return _REPORTS[key][1]


def _is_model(obj) -> bool:
    mod = sys.modules.get("hamcheck.model")
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
        from .errors import UsageError

        if not _is_model(self.model):
            raise UsageError(
                f"{MODELS_VARIABLE} must hold hamcheck.Model objects; got {type(self.model).__name__}"
            )
        report = _cached_check(self.model, _options(self.config, self.options))
        if not report.passed:
            raise HamiltonianCheckFailed(failure_message(report), report)

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
    from .errors import UsageError

    if not _is_model(_hamcheck_model):
        raise UsageError(f"@pytest.mark.hamcheck takes hamcheck.Model objects; got {type(_hamcheck_model).__name__}")
    marker = request.node.get_closest_marker("hamcheck")
    return _cached_check(_hamcheck_model, _options(request.config, marker.kwargs))
