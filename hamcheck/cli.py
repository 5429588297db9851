"""Command line: argument parsing and printing only; the library computes.

    hamcheck check PATH... [--points N] [--seed S] [--only CHECK ...] [--model NAME]
                           [--explain] [--quiet] [--no-progress]
                           [--json FILE] [--markdown FILE] [--csv FILE]
                           [--isolate [--timeout SECONDS] [--memory GIB] [--jobs N]] [--scheduler ADDRESS]
    hamcheck --debug check ...        (tracebacks of load errors)

Exit status, one meaning each: 0 when every model passes; 1 when some model
fails or some file could not be checked (a load error, no model, a time or
memory limit, a crash: results of the batch); 2 when hamcheck itself was used
wrongly (unknown option, missing path, no *.py files, no model of the given
name). Problems are one line each on stderr; the traceback only with --debug.
Without --isolate a time limit still applies (--timeout, default 180 s, per
file import and per model check). Every failure prints the command
that replays it (``hamcheck check FILE --model NAME --seed S --points N
--only CHECK``).

Example
-------
>>> from hamcheck.cli import main
>>> main(["check", "models/sphere.py", "--points", "8", "--quiet"])   # doctest: +SKIP
0
"""

from __future__ import annotations

import argparse
import importlib
import sys
from pathlib import Path

from .batch import DEFAULT_MEMORY_GB, DEFAULT_TIMEOUT, LoadError, Options, Progress, collect_files, load_models

__all__ = ["main", "load_models", "SUBCOMMANDS", "build_parser"]

#: Subcommands provided by other modules, as ``(name, "module:function")``.
#: ``function(subparsers)`` adds its parser and sets ``run=callable(args) -> int``
#: as a default. Imported lazily, only when the command line is parsed.
SUBCOMMANDS: list[tuple[str, str]] = [
    ("holonomy", "hamcheck.cli:add_holonomy_parser"),
    ("classify", "hamcheck.cli:add_classify_parser"),
    ("stability", "hamcheck.cli:add_stability_parser"),
    ("disk", "hamcheck.cli:add_disk_parser"),
]

model_files = collect_files  # the name this module used before batch.py existed


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a positive integer, got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a positive integer, got {text!r}")
    return value


def _positive_float(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a positive number, got {text!r}") from None
    if not value > 0:
        raise argparse.ArgumentTypeError(f"expected a positive number, got {text!r}")
    return value


def _add_check_parser(sub):
    from .checks import CHECK_NAMES

    p = sub.add_parser(
        "check",
        help="check every module-level hamcheck.Model in Python files or folders",
        description="Check every module-level hamcheck.Model in the given Python files and folders "
        "(a folder contributes the *.py files directly inside it). Passing checks at sampled points "
        "are strong evidence, not a proof.",
    )
    p.add_argument("paths", nargs="+", metavar="PATH", help="Python file or folder of model files")
    p.add_argument("--points", type=_positive_int, default=32, help="sampled points per model (default 32)")
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    p.add_argument("--only", nargs="+", choices=CHECK_NAMES, metavar="CHECK", help="run only these checks")
    p.add_argument("--model", action="append", metavar="NAME", help="check only the model(s) with this name (repeatable)")
    p.add_argument("--explain", action="store_true",
                   help="for each failing check, state the condition in the model's convention with residual and worst point")
    p.add_argument("--json", metavar="FILE", help="write the summary and all reports as JSON (docs/report-schema.md)")
    p.add_argument("--markdown", metavar="FILE", help="write the summary and all reports as Markdown")
    p.add_argument("--csv", metavar="FILE", help="write the summary table as CSV")
    p.add_argument("--quiet", action="store_true", help="print only the summary (and explanations with --explain)")
    p.add_argument("--no-progress", action="store_true", help="no [i/n] progress lines on stderr")
    g = p.add_argument_group("isolation (protects the batch, not the machine: not a security sandbox)")
    g.add_argument("--isolate", action="store_true",
                   help="check each file in its own process under a time and a memory limit")
    g.add_argument("--timeout", type=_positive_float, metavar="SECONDS",
                   help=f"wall-clock limit per file with --isolate, per file import and per model without it "
                        f"(default {DEFAULT_TIMEOUT:g})")
    g.add_argument("--memory", type=_positive_float, metavar="GIB",
                   help=f"address-space limit per file with --isolate, in GiB (default {DEFAULT_MEMORY_GB:g}; jax needs ~2)")
    g.add_argument("--jobs", type=_positive_int, metavar="N", help="files checked at once with --isolate (default 1)")
    g.add_argument("--scheduler", metavar="ADDRESS",
                   help="check the files on the Dask cluster at ADDRESS (tcp://host:port), each isolated as with "
                   "--isolate; files are shipped by content")
    p.set_defaults(run=run_check)


def _write(path: str, text: str) -> None:
    Path(path).write_text(text, encoding="utf-8", errors="backslashreplace")


def _print(text: str = "", file=None) -> None:
    """print() that never fails on text the stream cannot encode (non-UTF-8 file names)."""
    stream = file or sys.stdout
    try:
        print(text, file=stream)
    except UnicodeEncodeError:
        enc = getattr(stream, "encoding", None) or "utf-8"
        print(text.encode(enc, "backslashreplace").decode(enc), file=stream)


def run_check(args) -> int:
    from .batch import run_in_process, run_isolated

    limits = [f"--{n}" for n in ("memory", "jobs") if getattr(args, n) is not None]
    if args.scheduler and args.jobs is not None:
        _print("hamcheck: --jobs runs local processes and --scheduler a cluster's workers: give one of them", sys.stderr)
        return 2
    if limits and not (args.isolate or args.scheduler):
        _print(f"hamcheck: {', '.join(limits)} only apply with --isolate", sys.stderr)
        return 2
    try:
        files = collect_files(args.paths)
    except LoadError as exc:
        _print(f"hamcheck: {exc}", sys.stderr)
        return 2
    if not files:
        _print(f"hamcheck: no *.py files in {', '.join(args.paths)}", sys.stderr)
        return 2
    options = Options(
        points=args.points,
        seed=args.seed,
        only=tuple(args.only) if args.only else None,
        models=tuple(args.model) if args.model else None,
        explain=args.explain,
        timeout=args.timeout if args.timeout is not None else DEFAULT_TIMEOUT,
        memory_gb=args.memory if args.memory is not None else DEFAULT_MEMORY_GB,
        jobs=args.jobs or 1,
        debug=args.debug,
    )

    def echo(report):
        if not args.quiet:
            _print(str(report))
            _print()
        if args.explain and not report.passed:
            _print(report.explain())
            _print()

    progress = Progress(len(files), enabled=not args.no_progress)
    warn = lambda line: _print(f"hamcheck: {line}", sys.stderr)  # noqa: E731
    runner = run_isolated if args.isolate else run_in_process
    if args.scheduler:
        runner = _on_scheduler(args.scheduler)
    run = runner(files, options, echo=echo, progress=progress, warn=warn)
    if args.model and not run.outcomes:
        _print(f"hamcheck: no model named {', '.join(args.model)} in {', '.join(args.paths)}", sys.stderr)
        return 2
    _print(run.summary())
    if args.json:
        _write(args.json, run.to_json())
    if args.markdown:
        _write(args.markdown, run.to_markdown(explain=args.explain))
    if args.csv:
        _write(args.csv, run.to_csv())
    return run.exit_code


def add_classify_parser(sub) -> None:
    """``hamcheck classify FILE [--c C] [--json]``: a Hill potential's orbit (hamcheck.virasoro.classify_file)."""
    p = sub.add_parser("classify", help="class, monodromy, rotation number and stabilizer of a Hill potential T in a file")
    p.add_argument("file", metavar="FILE", help=".npy/.csv samples of T on a uniform grid, or a .py file defining T and c")
    p.add_argument("--c", type=float, default=None, help="the central charge c (else c from a .py file)")
    p.add_argument("--json", action="store_true", help="print JSON instead of text")
    p.set_defaults(run=run_classify)


def run_classify(args) -> int:
    from .virasoro import classify_file

    result = classify_file(args.file, args.c)
    _print(result.to_json() if args.json else result.text())
    return 0


def add_holonomy_parser(sub) -> None:
    """``hamcheck holonomy FILE [--c C] [--group SU2|SO3|U1|SU3] [--json]`` (hamcheck.loop_groups.classify_file)."""
    p = sub.add_parser("holonomy", help="holonomy, conjugacy class and stabilizer of a connection A dtheta in a file")
    p.add_argument("file", metavar="FILE", help=".npy/.csv (M rows x 3 columns for SU(2)) or .py defining A and c")
    p.add_argument("--c", type=float, default=None, help="the level c (else c from a .py file)")
    p.add_argument("--group", choices=("SU2", "SO3", "U1", "SU3"), default="SU2", help="structure group (default SU2)")
    p.add_argument("--json", action="store_true", help="print JSON instead of text")
    p.set_defaults(run=run_holonomy)


def run_holonomy(args) -> int:
    from . import loop_groups

    group = loop_groups.SU(3) if args.group == "SU3" else getattr(loop_groups, args.group)
    result = loop_groups.classify_file(args.file, args.c, group=group)
    _print(result.to_json() if args.json else result.text())
    return 0


def _on_scheduler(address: str):
    """A runner for run_check that sends the files to the Dask cluster at ``address`` (isolated there)."""

    def run(files, options, **kwargs):
        from .distributed import client_for, run_batch

        with client_for(address) as client:
            return run_batch(files, options, client, label=address, **kwargs)

    return run


# ------------------------------------------------------------ hamcheck disk
def add_disk_parser(sub) -> None:
    """``hamcheck disk FILE [--c C] [--points N] [--seed S] [--only CHECK ...] [--json]`` (hyperbolic disks)."""
    p = sub.add_parser("disk", help="validate a hyperbolic metric on the disk (cones or u in a .py file) and classify its orbit")
    p.add_argument("file", metavar="FILE", help="a .py file defining cones = [(p, alpha), ...] or u(x, y) (and optionally c)")
    p.add_argument("--c", type=float, default=None, help="central charge for the boundary potential (else c from the file, else 1)")
    p.add_argument("--points", type=_positive_int, default=32, help="sampled points for the Liouville check (default 32)")
    p.add_argument("--seed", type=int, default=0, help="random seed (default 0)")
    p.add_argument("--only", nargs="+", choices=["liouville", "cone_angles", "boundary"], metavar="CHECK")
    p.add_argument("--json", action="store_true", help="print JSON instead of text")
    p.set_defaults(run=run_disk)


def run_disk(args) -> int:
    import json

    from .hyperbolic.command import format_orbit, run

    report, orbit = run(args.file, args.c, args.points, args.seed, tuple(args.only) if args.only else None)
    if args.json:
        orbit_data = orbit.to_dict() if orbit is not None else None
        _print(json.dumps({"report": report.to_dict(), "orbit": orbit_data}, indent=2, default=str))
    else:
        _print(str(report))
        _print(format_orbit(orbit) if orbit else "orbit not classified: the metric failed validation")
    return 0 if report.passed else 1


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="hamcheck", description="Numerical checks of Hamiltonian G-spaces (evidence at sampled points, not a proof)."
    )
    parser.add_argument("--debug", action="store_true", help="show tracebacks of load errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    _add_check_parser(sub)
    for _name, target in SUBCOMMANDS:
        module, func = target.split(":")
        getattr(importlib.import_module(module), func)(sub)
    return parser


def main(argv=None) -> int:
    """Run the command line; returns the exit status (see the module docstring)."""
    argv = list(sys.argv[1:] if argv is None else argv)
    # `--debug` is accepted after the subcommand too (where users tend to put it)
    debug_late = "--debug" in argv[1:] and argv[:1] != ["--debug"]
    if debug_late:
        argv = ["--debug"] + [a for a in argv if a != "--debug"]
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse already printed the one-line usage error
        return int(exc.code or 0)
    if not getattr(args, "run", None):
        parser.print_help()
        return 2
    try:
        return int(args.run(args))
    except KeyboardInterrupt:
        _print("hamcheck: interrupted", sys.stderr)
        return 2
    except Exception as exc:
        from .errors import HamcheckError

        if isinstance(exc, HamcheckError) and not args.debug:
            _print(f"hamcheck: {exc}", sys.stderr)
            return 2
        raise


def add_stability_parser(sub) -> None:
    """``hamcheck stability FILE --a LO HI N --b LO HI N`` (hamcheck.virasoro.stability_chart)."""
    p = sub.add_parser(
        "stability",
        help="chart of monodromy classes of a Hill potential family potential(a, b) over a parameter plane",
        description="Classify c d^2 + T for T = potential(a, b) over a grid of (a, b) and draw the chart. "
        "FILE is a Python file defining potential(a, b) (returning a function of theta, samples or a number) and c.",
    )
    p.add_argument("file", metavar="FILE", help="Python file defining potential(a, b) and c")
    p.add_argument("--a", nargs=3, type=float, required=True, metavar=("LO", "HI", "N"), help="first parameter: N values from LO to HI")
    p.add_argument("--b", nargs=3, type=float, required=True, metavar=("LO", "HI", "N"), help="second parameter: N values from LO to HI")
    p.add_argument("--c", type=float, default=None, help="the central charge c (else c from FILE, else 1)")
    p.add_argument("--png", metavar="PATH", default="stability.png", help="where to write the chart (default stability.png)")
    p.add_argument("--json", metavar="PATH", help="write the grid (classes, traces, rotation numbers) as JSON")
    p.add_argument("--scheduler", metavar="ADDRESS", help="run on the Dask cluster at ADDRESS")
    p.add_argument("--workers", type=int, metavar="N", help="run on an embedded Dask cluster of N local worker processes")
    p.set_defaults(run=run_stability)


def _linspace(spec, name):
    lo, hi, n = spec
    if n < 1 or n != int(n):
        from .errors import UsageError

        raise UsageError(f"--{name} LO HI N needs a positive whole N; got {n:g}")
    import numpy as np

    return np.linspace(lo, hi, int(n))


def run_stability(args) -> int:
    from .distributed import client_for
    from .virasoro.stability import load_potential_family, stability_chart

    potential, c_file = load_potential_family(args.file)
    c = args.c if args.c is not None else (c_file if c_file is not None else 1.0)
    av, bv = _linspace(args.a, "a"), _linspace(args.b, "b")
    with client_for(args.scheduler, workers=args.workers) as client:
        chart = stability_chart(potential, av, bv, c=c, client=client)
    chart.plot(args.png)
    if args.json:
        with open(args.json, "w", encoding="utf-8") as fh:
            fh.write(chart.to_json())
    _print(repr(chart))
    _print(f"wrote {args.png}" + (f" and {args.json}" if args.json else "") + f" ({chart.seconds:.1f} s, {chart.tasks} task(s))")
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
