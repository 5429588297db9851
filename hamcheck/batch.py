"""Checking many model files: loading, progress, and isolation in child processes.

``hamcheck check DIR`` loads every file in this process (fast: jax is
imported once). ``hamcheck check DIR --isolate`` runs each file in its own
child process with a wall-clock time limit and an address-space limit
(``resource.setrlimit(RLIMIT_AS)`` in the child), so a file that raises at
import, loops forever, allocates without bound or crashes the interpreter is
reported as such and the other files are still checked.

The isolation protects the batch, not the machine: it is NOT a security
sandbox. A child runs the submitted code with the user's permissions and can
read, write and delete files, open network connections, or start processes
outside its process group. Only check files you would be willing to import.

Example
-------
>>> from hamcheck.batch import Options, collect_files, run_isolated   # doctest: +SKIP
>>> run = run_isolated(collect_files(["examples/coursework"]), Options(timeout=60))  # doctest: +SKIP
>>> print(run.summary())                                               # doctest: +SKIP
"""

from __future__ import annotations

import dataclasses
import os
import shlex
import shutil
import sys
import time
from dataclasses import dataclass
from pathlib import Path

from ._watchdog import TimeLimitReached, time_limit
from .errors import LoadError
from .report import Outcome, Report, RunReport

__all__ = [
    "DEFAULT_MEMORY_GB",
    "DEFAULT_TIMEOUT",
    "LoadError",
    "Options",
    "Progress",
    "collect_files",
    "display_path",
    "load_models",
    "run_in_process",
    "run_isolated",
]

#: Wall-clock seconds per file in --isolate mode. A child imports jax (2-6 s on
#: a loaded 2-core machine) and compiles one jit program per model (3-15 s);
#: 180 s leaves room for a file with several models of moderate dimension.
DEFAULT_TIMEOUT = 180.0

#: Address-space limit per child in GiB. Measured on a 2-core machine: jax +
#: a full check of the bundled sphere and oscillator fail at 0.5, 1 and 1.5 GiB
#: (abort at import, std::bad_alloc while compiling) and succeed at 2 GiB with
#: ~460 MB resident (tests/test_batch.py::test_good_file_passes_under_the_default_memory_limit
#: checks that a model passes under the default).
#: Address space is mostly thread stacks and allocator arenas, which grow with
#: the core count, so the default is twice the measured need plus 128 MiB per
#: core beyond two.
DEFAULT_MEMORY_GB = 4.0 + 0.125 * max(0, (os.cpu_count() or 2) - 2)

#: Text in a child's stderr that marks a crash as running out of memory.
_MEMORY_MARKERS = ("MemoryError", "bad_alloc", "Cannot allocate memory", "cannot allocate memory", "RESOURCE_EXHAUSTED", "Out of memory")


@dataclass(frozen=True)
class Options:
    """What ``hamcheck check`` was asked to do (the parsed command line, without the paths)."""

    points: int = 32
    seed: int = 0
    only: tuple[str, ...] | None = None
    models: tuple[str, ...] | None = None
    explain: bool = False
    timeout: float = DEFAULT_TIMEOUT
    memory_gb: float = DEFAULT_MEMORY_GB
    jobs: int = 1
    debug: bool = False

    def check_kwargs(self) -> dict:
        return {"points": self.points, "seed": self.seed, "only": list(self.only) if self.only else None}

    def to_dict(self) -> dict:
        return dataclasses.asdict(self)


def display_path(path) -> str:
    """``path`` as printable text: bytes that are not UTF-8 appear as ``\\xNN`` escapes."""
    return os.fsencode(os.fspath(path)).decode("utf-8", "backslashreplace")


def collect_files(paths) -> list[Path]:
    """Python files named by ``paths``; a folder contributes the ``*.py`` files directly inside it
    (not subfolders, not names starting with ``_``), sorted by name."""
    files = []
    for p in map(Path, paths):
        if p.is_dir():
            files += sorted(q for q in p.glob("*.py") if not q.name.startswith("_") and q.is_file())
        elif p.is_file():
            files.append(p)
        else:
            raise LoadError("", f"no such file or folder: {display_path(p)}")
    return files


def load_models(path, shown: str | None = None) -> list:
    """Import a Python file and return its module-level :class:`hamcheck.Model` objects, in order.

    Every failure becomes a one-line :class:`LoadError`: a syntax error (with
    its line), an exception at import (with its type), ``sys.exit()`` at
    import, running out of memory. Each model's ``source`` is set to ``path``
    as given (or ``shown``, the name of a file shipped to a worker by content),
    so that replay commands name the file that was checked.
    """
    import importlib.util
    import zlib

    from .errors import HamcheckError
    from .model import Model

    shown = display_path(path) if shown is None else shown
    resolved = Path(path).resolve()
    name = f"_hamcheck_user_{zlib.crc32(os.fsencode(resolved)):08x}"
    spec = importlib.util.spec_from_file_location(name, resolved)
    if spec is None or spec.loader is None:
        raise LoadError(shown, "not a Python file")
    try:
        source = resolved.read_bytes()
    except OSError as exc:
        raise LoadError(shown, f"cannot be read: {exc.strerror or exc}") from exc
    module = importlib.util.module_from_spec(spec)
    folder = str(resolved.parent)
    before = set(sys.modules)
    sys.path.insert(0, folder)
    wrote_bytecode = sys.dont_write_bytecode
    sys.dont_write_bytecode = True  # imports of the user's helpers leave no __pycache__ in their folder
    try:
        # compiled under the printable name: jax copies co_filename into its compiled programs
        # and fails (std::bad_cast) on file names that are not valid UTF-8
        code = compile(source, display_path(resolved), "exec", dont_inherit=True)
        sys.modules[name] = module  # dataclasses and typing in the user's file look their module up
        exec(code, module.__dict__)
    except SyntaxError as exc:
        raise LoadError(shown, f"line {exc.lineno}: syntax error: {exc.msg}") from exc
    except MemoryError as exc:
        raise LoadError(shown, "ran out of memory at import (MemoryError)", "out-of-memory") from exc
    except HamcheckError as exc:
        raise LoadError(shown, str(exc)) from exc
    except SystemExit as exc:
        raise LoadError(shown, f"called sys.exit({exc.code!r}) at import") from exc
    except Exception as exc:
        raise LoadError(shown, f"raised {type(exc).__name__} at import: {_one_line(exc)}") from exc
    finally:
        sys.modules.pop(name, None)
        sys.dont_write_bytecode = wrote_bytecode
        if folder in sys.path:
            sys.path.remove(folder)
        _forget_local_modules(before, folder)
    seen, models = set(), []
    for value in vars(module).values():
        if isinstance(value, Model) and id(value) not in seen:
            seen.add(id(value))
            models.append(value.replace(source=shown))
    return models


def _forget_local_modules(before: set, folder: str) -> None:
    """Drop helper modules the file imported from its own folder (a shared ``_starter.py``, say),
    so that the next file, maybe from another folder with a helper of the same name, imports its own."""
    prefix = os.path.join(folder, "")
    for mod in set(sys.modules) - before:
        path = getattr(sys.modules[mod], "__file__", None) or ""
        if path.startswith(prefix):
            del sys.modules[mod]


def _one_line(exc: BaseException, limit: int = 200) -> str:
    text = " ".join(str(exc).split())
    return text if len(text) <= limit else text[: limit - 3] + "..."


def duplicate_names(names) -> list[str]:
    """Names that occur more than once, in order of first repetition."""
    seen, dups = set(), []
    for n in names:
        if n in seen and n not in dups:
            dups.append(n)
        seen.add(n)
    return dups


def _duplicate_note(dups) -> str:
    return (
        f"two models in this file are named {', '.join(map(repr, dups))}: both were checked, but --model selects "
        "them together; give each a distinct name"
    )


class Progress:
    """``[i/n]`` lines on stderr: one rewritten line on a terminal, else at most one line every ``every`` seconds
    (always the first and last), so a folder of thousands of files shows progress without flooding a log."""

    def __init__(self, total: int, stream=None, enabled: bool = True, every: float = 2.0):
        self.total, self.stream, self.enabled, self.every = total, stream or sys.stderr, enabled and total > 0, every
        self.tty = bool(getattr(self.stream, "isatty", lambda: False)())
        self.t0 = time.monotonic()
        self.last = -1e9
        self.width = shutil.get_terminal_size((100, 20)).columns

    def _eta(self, i: int) -> str:
        elapsed = time.monotonic() - self.t0
        if i <= 1 or self.total < 20:
            return ""
        left = elapsed / (i - 1) * (self.total - i + 1)
        return f" {100 * (i - 1) // self.total}%, ~{_clock(left)} left"

    def step(self, i: int, label: str) -> None:
        if not self.enabled:
            return
        text = f"[{i}/{self.total}]{self._eta(i)} {label}"
        now = time.monotonic()
        if self.tty:
            self.stream.write("\r" + text[: self.width - 1].ljust(self.width - 1))
            self.stream.flush()
        elif self.total <= 50 or i in (1, self.total) or now - self.last >= self.every:
            self.last = now
            print(text, file=self.stream, flush=True)

    def done(self) -> None:
        if self.enabled and self.tty:
            self.stream.write("\r" + " " * (self.width - 1) + "\r")
            self.stream.flush()


def _clock(seconds: float) -> str:
    m, s = divmod(int(seconds), 60)
    return f"{m // 60}:{m % 60:02d}:{s:02d}" if m >= 60 else f"{m}:{s:02d}"


def _with_convention(report: Report, model) -> Report:
    return dataclasses.replace(report, convention=(model.convention.sign, model.convention.flow))


def _check_one(model, options: Options):
    """Check one loaded model; a usage problem or a crash of hamcheck itself is a row, not an abort."""
    from .suite import check

    try:
        return _with_convention(check(model, **options.check_kwargs()), model), None
    except MemoryError:
        return None, ("out-of-memory", "ran out of memory while checking")
    except Exception as exc:  # hamcheck.check reports faults of user code; anything else is still one row
        return None, ("crashed", f"check() raised {type(exc).__name__}: {_one_line(exc)}")


# ------------------------------------------------------------- in process
def _replay_in_isolation(shown: str, options: Options, model: str | None = None) -> str:
    which = f" --model {shlex.quote(model)}" if model else ""
    return f"hamcheck check {shlex.quote(shown)}{which} --isolate --timeout {options.timeout:g}"


def run_in_process(files, options: Options, *, echo=None, progress: Progress | None = None, warn=None) -> RunReport:
    """Load and check every file in this process. ``echo(report)`` is called after each check
    (the CLI prints the table there); ``warn(line)`` gets each load problem as one line."""
    t0 = time.monotonic()
    warn = warn or (lambda line: print(f"hamcheck: {line}", file=sys.stderr))
    progress = progress or Progress(len(files), enabled=False)
    outcomes, reports = [], []
    for i, f in enumerate(files, 1):
        shown = display_path(f)
        progress.step(i, shown)
        try:
            with time_limit(options.timeout, f"{shown}: importing the file"):
                models = load_models(f)
        except TimeLimitReached as exc:
            warn(str(exc))
            outcomes.append(Outcome(shown, None, "timeout", message=exc.reason, replay=_replay_in_isolation(shown, options)))
            continue
        except LoadError as exc:
            warn(str(exc))
            if options.debug:
                import traceback

                traceback.print_exception(exc.__cause__ or exc)
            outcomes.append(Outcome(shown, None, exc.kind, message=exc.reason, replay=f"hamcheck check {shlex.quote(shown)}"))
            continue
        if options.models:
            models = [m for m in models if m.name in options.models]
        elif not models:
            warn(f"{shown}: defines no hamcheck.Model at module level")
            outcomes.append(Outcome(shown, None, "no-model", message="defines no hamcheck.Model at module level"))
            continue
        dups = duplicate_names(m.name for m in models)
        if dups:
            warn(f"{shown}: {_duplicate_note(dups)}")
        for m in models:
            if len(models) > 1 or len(files) == 1:
                progress.step(i, f"{shown}: {m.name}")
            try:
                with time_limit(options.timeout, f"{shown}: checking model {m.name!r}"):
                    report, problem = _check_one(m, options)
            except TimeLimitReached as exc:
                warn(str(exc))
                outcomes.append(Outcome(shown, m.name, "timeout", message=exc.reason,
                                        replay=_replay_in_isolation(shown, options, m.name)))
                continue
            note = _duplicate_note(dups) if m.name in dups else ""
            if report is None:
                outcomes.append(Outcome(shown, m.name, problem[0], message=problem[1]))
                continue
            reports.append(report)
            outcomes.append(Outcome.of_report(shown, report, note))
            if echo:
                echo(report)
    progress.done()
    return RunReport(outcomes, reports, options.to_dict() | {"isolate": False}, time.monotonic() - t0)


# The child-process machinery (``--isolate``) lives in :mod:`hamcheck.isolation`, which builds on this
# module; its names stay reachable here for callers of ``hamcheck.batch``, imported on first use.
_ISOLATION = ("child_main", "file_done", "in_file_order", "run_isolated", "run_one_isolated")


def __getattr__(name):
    if name in _ISOLATION:
        from . import isolation

        return getattr(isolation, name)
    raise AttributeError(f"module 'hamcheck.batch' has no attribute {name!r}")
