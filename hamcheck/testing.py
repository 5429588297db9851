"""pytest integration: ``assert_hamiltonian``, a ``hamcheck`` marker, declared models.

The pytest plugin itself is the small top-level module ``pytest_hamcheck``,
registered through the ``pytest11`` entry point, so a project that did
``pip install hamcheck`` gets it without any configuration. Loading the plugin
imports neither hamcheck nor jax: they are imported when a test first uses the
plugin (a declared model, the marker) or this module.

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

from pytest_hamcheck import HamiltonianCheckFailed

__all__ = ["assert_hamiltonian", "assert_passes", "HamiltonianCheckFailed"]

_OPTION_NAMES = ("points", "seed", "only", "tolerances", "settings")


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


def assert_passes(result):
    """Fail with the rendered report unless ``result`` passed.

    ``result`` is a :class:`hamcheck.Report` from any check family (axioms,
    cocycles, gauge actions, metric validation) or an object with a
    ``.report()`` method returning one (an orbit classification, say).
    Returns the report.

    Example
    -------
    >>> assert_passes(virasoro.classify(T, c=2.0))   # doctest: +SKIP
    """
    from .errors import UsageError
    from .report import Report

    report = result.report() if hasattr(result, "report") and callable(result.report) else result
    if not isinstance(report, Report):
        raise UsageError(
            f"assert_passes takes a hamcheck.Report or a result with .report(); got {type(result).__name__}"
        )
    if not report.passed:
        raise HamiltonianCheckFailed(failure_message(report, report.convention), report)
    return report


def _with_convention(report, model):
    """The report, recording the model's convention so that ``report.explain()`` states it."""
    import dataclasses

    return dataclasses.replace(report, convention=(model.convention.sign, model.convention.flow))
