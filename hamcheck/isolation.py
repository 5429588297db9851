"""Checking each model file in its own child process (``hamcheck check --isolate``).

A child runs one file under an address-space, CPU-time and file-size limit and
writes JSON lines the parent turns into :class:`~hamcheck.report.Outcome` rows,
so a file that raises at import, never finishes, eats memory or crashes the
interpreter costs one row. **Isolation protects the batch, not the machine**:
it is not a security sandbox; only check files you would be willing to import.

>>> from hamcheck.batch import Options, collect_files
>>> from hamcheck.isolation import run_isolated                        # doctest: +SKIP
>>> run = run_isolated(collect_files(["examples/coursework"]), Options(timeout=60))  # doctest: +SKIP
"""

from __future__ import annotations

import json
import os
import shlex
import signal
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

from .batch import (
    _MEMORY_MARKERS,
    Options,
    Progress,
    _check_one,
    _duplicate_note,
    display_path,
    duplicate_names,
    load_models,
)
from .errors import LoadError
from .report import Outcome, Report, RunReport

__all__ = ["child_main", "file_done", "in_file_order", "run_isolated", "run_one_isolated"]

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
from hamcheck.isolation import child_main
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
