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
import json
import os
import shlex
import shutil
import signal
import subprocess
import sys
import tempfile
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


# ---------------------------------------------------------------- isolated
_BOOTSTRAP = """\
import resource, sys
def limit(kind, value):
    soft, hard = resource.getrlimit(kind)
    if value > 0:
        value = value if hard == resource.RLIM_INFINITY else min(value, hard)
        resource.setrlimit(kind, (value, hard if hard != resource.RLIM_INFINITY else resource.RLIM_INFINITY))
limit(resource.RLIMIT_AS, int(sys.argv[1]))
limit(resource.RLIMIT_CPU, int(sys.argv[2]))
limit(resource.RLIMIT_FSIZE, 2**28)  # a file printing in a loop must not fill the disk
resource.setrlimit(resource.RLIMIT_CORE, (0, 0))
from hamcheck.batch import child_main
sys.exit(child_main(sys.argv[3:]))
"""


def _emit(stream, **event) -> None:
    stream.write(json.dumps(event) + "\n")
    stream.flush()


def child_main(argv) -> int:
    """Entry point of one isolated child: ``RESULT_FILE FILE OPTIONS_JSON [SHOWN]``.

    Writes one JSON object per line to RESULT_FILE as it goes (``loaded``,
    ``checking``, ``report``, ``problem``, ``done``), so that the parent knows
    how far a child got when it had to be stopped.
    """
    result_path, file, options_json, *shown = argv  # SHOWN: the name to report a shipped file by
    options = Options(**{k: tuple(v) if isinstance(v, list) else v for k, v in json.loads(options_json).items()})
    with open(result_path, "a", encoding="utf-8") as out:
        _emit(out, event="start", pid=os.getpid())
        try:
            models = load_models(file, *shown)
        except LoadError as exc:
            _emit(out, event="load-error", kind=exc.kind, message=exc.reason)
            return 0
        names = [m.name for m in models]
        if options.models:
            models = [m for m in models if m.name in options.models]
        _emit(out, event="loaded", models=[m.name for m in models], all=names)
        for m in models:
            _emit(out, event="checking", model=m.name)
            report, problem = _check_one(m, options)
            if report is None:
                _emit(out, event="problem", model=m.name, kind=problem[0], message=problem[1])
            else:
                _emit(out, event="report", model=m.name, report=report.to_dict())
        _emit(out, event="done")
    return 0


@dataclass
class _Child:
    file: Path
    shown: str
    proc: subprocess.Popen
    result: Path
    stderr: Path
    started: float
    timed_out: bool = False


def _child_env() -> dict:
    env = dict(os.environ)
    root = str(Path(__file__).resolve().parent.parent)  # the hamcheck this parent runs, not another install
    env["PYTHONPATH"] = root + (os.pathsep + env["PYTHONPATH"] if env.get("PYTHONPATH") else "")
    env.setdefault("JAX_PLATFORMS", "cpu")
    env["PYTHONDONTWRITEBYTECODE"] = "1"
    return env


def _spawn(f: Path, options: Options, workdir: Path, index: int, shown: str | None = None) -> _Child:
    result, stderr = workdir / f"{index}.jsonl", workdir / f"{index}.err"
    mem = int(options.memory_gb * 2**30) if options.memory_gb and options.memory_gb > 0 else 0
    # CPU-seconds backstop so that an orphaned child (parent killed) still ends; jax uses every core
    cpu = int(options.timeout * (os.cpu_count() or 2) + 60) if options.timeout and options.timeout > 0 else 0
    child_opts = json.dumps({k: v for k, v in options.to_dict().items()})
    with open(stderr, "wb") as err:
        proc = subprocess.Popen(
            [sys.executable, "-c", _BOOTSTRAP, str(mem), str(cpu), str(result), os.fsdecode(f), child_opts]
            + ([shown] if shown is not None else []),
            stdin=subprocess.DEVNULL,
            stdout=subprocess.DEVNULL,  # user prints are not part of the report
            stderr=err,
            start_new_session=True,  # own process group: a timeout kills what the file started, too
            env=_child_env(),
        )
    return _Child(f, display_path(f) if shown is None else shown, proc, result, stderr, time.monotonic())


def _kill(child: _Child) -> None:
    try:
        os.killpg(child.proc.pid, signal.SIGKILL)
    except (ProcessLookupError, PermissionError):
        pass
    child.proc.wait()


def _events(path: Path) -> list[dict]:
    events = []
    try:
        text = path.read_text(encoding="utf-8", errors="replace")
    except FileNotFoundError:
        return events
    for line in text.splitlines():
        try:
            events.append(json.loads(line))
        except json.JSONDecodeError:  # a line cut short by a kill
            break
    return events


def _stderr_tail(path: Path, lines: int = 3) -> str:
    try:
        with open(path, "rb") as f:
            f.seek(max(0, f.seek(0, os.SEEK_END) - 65536))
            text = f.read().decode("utf-8", errors="replace")
    except FileNotFoundError:
        return ""
    tail = [ln.strip() for ln in text.strip().splitlines() if ln.strip()][-lines:]
    return " | ".join(tail)


def _interpret(child: _Child, options: Options, seconds: float) -> tuple[list[Outcome], list[Report], list[str]]:
    """Turn a finished child's events, exit status and stderr into summary rows."""
    shown, events = child.shown, _events(child.result)
    outcomes, reports, warnings = [], [], []
    replay_file = f"hamcheck check {shlex.quote(shown)}"
    kinds = {e.get("event") for e in events}
    loaded = next((e for e in events if e.get("event") == "loaded"), None)

    if "load-error" in kinds:
        e = next(e for e in events if e.get("event") == "load-error")
        warnings.append(f"{shown}: {e['message']}")
        return [Outcome(shown, None, e["kind"], message=e["message"], replay=replay_file, seconds=seconds)], [], warnings

    done_models = []
    dups = duplicate_names(loaded["all"]) if loaded else []
    if dups:
        warnings.append(f"{shown}: {_duplicate_note(dups)}")
    for e in events:
        if e.get("event") == "report":
            report = Report.from_dict(e["report"])
            reports.append(report)
            outcomes.append(Outcome.of_report(shown, report, _duplicate_note(dups) if report.model in dups else ""))
            done_models.append(e["model"])
        elif e.get("event") == "problem":
            outcomes.append(Outcome(shown, e["model"], e["kind"], message=e["message"], seconds=seconds))
            done_models.append(e["model"])
    if "done" in kinds:
        if loaded is not None and not loaded["all"] and not options.models:
            warnings.append(f"{shown}: defines no hamcheck.Model at module level")
            outcomes.append(Outcome(shown, None, "no-model", message="defines no hamcheck.Model at module level", seconds=seconds))
        return outcomes, reports, warnings

    # the child did not finish: say where it stopped and why
    rc = child.proc.returncode
    tail = _stderr_tail(child.stderr)
    if child.timed_out:
        status, why = "timeout", f"time limit of {options.timeout:g} s reached"
    elif any(m in tail for m in _MEMORY_MARKERS):
        status, why = "out-of-memory", (
            f"ran out of memory under the limit of {options.memory_gb:g} GiB (jax alone needs about 2; "
            f"raise --memory if every file stops here) ({tail[-120:]})"
        )
    elif rc is not None and rc < 0:
        name = signal.Signals(-rc).name if -rc in signal.Signals._value2member_map_ else f"signal {-rc}"
        if -rc == signal.SIGKILL:
            status, why = "out-of-memory", f"killed by {name} (most likely the system ran out of memory)"
        elif -rc == signal.SIGXCPU:
            status, why = "timeout", f"killed by {name}: used more CPU time than allowed"
        elif -rc == signal.SIGXFSZ:
            status, why = "crashed", f"killed by {name}: wrote more than 256 MiB to a file or to stderr"
        else:
            status, why = "crashed", f"killed by {name}" + (f" ({tail[-160:]})" if tail else "")
    else:
        status, why = "crashed", f"exited with status {rc} without a result" + (f" ({tail[-160:]})" if tail else "")
    replay_limits = f"{replay_file} --isolate --timeout {options.timeout:g} --memory {options.memory_gb:g}"
    if loaded is None:
        warnings.append(f"{shown}: {why} while importing the file")
        outcomes.append(Outcome(shown, None, status, message=f"{why} while importing the file", replay=replay_limits, seconds=seconds))
        return outcomes, reports, warnings
    pending = [m for m in loaded["models"] if m not in done_models]
    for j, m in enumerate(pending):
        msg = f"{why} while checking this model" if j == 0 else f"not checked: the file stopped at model {pending[0]!r}"
        warnings.append(f"{shown}: model {m}: {msg}")
        outcomes.append(Outcome(shown, m, status, message=msg, replay=f"{replay_limits} --model {shlex.quote(m)}", seconds=seconds))
    return outcomes, reports, warnings


def _syntax_problem(f: Path) -> str | None:
    """Compile (never run) the file here: a syntax error costs no child process."""
    try:
        source = f.read_bytes()
    except OSError as exc:
        return f"cannot be read: {exc.strerror}"
    try:
        compile(source, display_path(f), "exec", dont_inherit=True)
    except SyntaxError as exc:
        return f"line {exc.lineno}: syntax error: {exc.msg}"
    except ValueError as exc:  # e.g. null bytes
        return f"is not Python source: {exc}"
    return None


def run_isolated(files, options: Options, *, echo=None, progress: Progress | None = None, warn=None) -> RunReport:
    """Check each file in its own child process (``options.jobs`` at a time) under the time and memory limits."""
    t0 = time.monotonic()
    warn = warn or (lambda line: print(f"hamcheck: {line}", file=sys.stderr))
    progress = progress or Progress(len(files), enabled=False)
    per_file: dict[int, tuple[list, list]] = {}
    queue = list(enumerate(files))
    running: dict[int, _Child] = {}
    started = 0
    with tempfile.TemporaryDirectory(prefix="hamcheck-batch-") as tmp:
        workdir = Path(tmp)
        try:
            while queue or running:
                while queue and len(running) < max(1, options.jobs):
                    i, f = queue.pop(0)
                    started += 1
                    progress.step(started, display_path(f))
                    problem = _syntax_problem(f)
                    if problem:
                        shown = display_path(f)
                        warn(f"{shown}: {problem}")
                        per_file[i] = ([Outcome(shown, None, "load-error", message=problem, replay=f"hamcheck check {shlex.quote(shown)}")], [])
                        continue
                    running[i] = _spawn(f, options, workdir, i)
                for i, child in list(running.items()):
                    elapsed = time.monotonic() - child.started
                    if child.proc.poll() is None:
                        if options.timeout and elapsed > options.timeout:
                            child.timed_out = True
                            _kill(child)
                        else:
                            continue
                    else:
                        _kill(child)  # the file may have left processes behind in its group
                    outs, reps, warnings = _interpret(child, options, round(elapsed, 3))
                    file_done(per_file, i, outs, reps, warnings, warn, echo)
                    del running[i]
                if running:
                    time.sleep(0.05)
        finally:
            for child in running.values():
                _kill(child)
    progress.done()
    outcomes, reports = in_file_order(per_file)
    return RunReport(outcomes, reports, options.to_dict() | {"isolate": True}, time.monotonic() - t0)


def file_done(per_file: dict, i: int, outs, reps, warnings, warn, echo) -> None:
    """Pass a finished file's warnings and reports on as they arrive; keep its rows under its index."""
    for line in warnings:
        warn(line)
    for r in reps:
        if echo:
            echo(r)
    per_file[i] = (outs, reps)


def in_file_order(per_file: dict):
    """``(outcomes, reports)`` of all files in the order the files were given, whatever order they finished in."""
    return [o for i in sorted(per_file) for o in per_file[i][0]], [r for i in sorted(per_file) for r in per_file[i][1]]


def run_one_isolated(f: Path, options: Options, workdir: Path, *, shown: str | None = None, index: int = 0):
    """Check one file in a child process under the limits and wait for it: ``(outcomes, reports, warnings)``.

    The unit of work a Dask worker runs (:mod:`hamcheck.distributed`); ``shown``
    is the name the rows report (the user's path of a file shipped by content).
    """
    shown = display_path(f) if shown is None else shown
    problem = _syntax_problem(f)
    if problem:
        return [Outcome(shown, None, "load-error", message=problem, replay=f"hamcheck check {shlex.quote(shown)}")], [], [f"{shown}: {problem}"]
    child = _spawn(f, options, workdir, index, shown)
    try:
        while child.proc.poll() is None:
            if options.timeout and time.monotonic() - child.started > options.timeout:
                child.timed_out = True
                break
            time.sleep(0.05)
    finally:
        _kill(child)  # also what the file left behind in its process group
    return _interpret(child, options, round(time.monotonic() - child.started, 3))
