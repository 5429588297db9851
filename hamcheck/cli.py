"""Command line: argument parsing and printing only; the library computes.

    hamcheck check PATH... [--points N] [--seed S] [--only CHECK ...] [--model NAME]
                           [--explain] [--quiet] [--no-progress]
                           [--json FILE] [--markdown FILE] [--csv FILE]
                           [--isolate [--timeout SECONDS] [--memory GIB] [--jobs N]]
    hamcheck --debug check ...        (tracebacks of load errors)

Exit status: 0 when every model passes; 1 when some check fails or errors;
2 for usage errors and when some file or model could not be checked (load
error, no model, time or memory limit, crash). Problems are one line each on
stderr; the traceback only with --debug. Every failure prints the command
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
    ("holonomy", "hamcheck.affine:add_holonomy_parser"),
    ("classify", "hamcheck.virasoro:add_classify_parser"),
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
                   help=f"wall-clock limit per file with --isolate (default {DEFAULT_TIMEOUT:g})")
    g.add_argument("--memory", type=_positive_float, metavar="GIB",
                   help=f"address-space limit per file with --isolate, in GiB (default {DEFAULT_MEMORY_GB:g}; jax needs ~2)")
    g.add_argument("--jobs", type=_positive_int, metavar="N", help="files checked at once with --isolate (default 1)")
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

    limits = [f"--{n}" for n in ("timeout", "memory", "jobs") if getattr(args, n) is not None]
    if limits and not args.isolate:
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
        _print(json.dumps({"report": report.to_dict(), "orbit": orbit}, indent=2, default=str))
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


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
