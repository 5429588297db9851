"""Dask: clusters and clients, files shipped by content, and batches of model files on workers.

Dask is imported only here and only when a cluster is used, so ``import
hamcheck`` stays fast and works without it (``pip install 'hamcheck[cluster]'``).

* :func:`client_for` opens a client on an existing scheduler (``address``) or
  on an embedded :class:`distributed.LocalCluster` of local worker processes
  (loopback only), and closes what it opened.
* :func:`run_batch` is ``hamcheck check PATH... --scheduler ADDRESS``: every
  file becomes one task; the worker writes the file (and the other files of its
  folder, for helpers such as ``_starter.py``) from their bytes into a private
  folder and checks it in a child process with the time and memory limits of
  ``--isolate`` (:func:`hamcheck.batch.run_one_isolated`). Results stream back
  in completion order; the summary is in file order, the same as a sequential run.
  A worker that dies costs its file one ``crashed`` row.

Isolation protects the batch, not the workers: model files are code and run
with the workers' permissions. Only send files you would import.

Example
-------
>>> from hamcheck.distributed import client_for, run_batch        # doctest: +SKIP
>>> from hamcheck.batch import Options, collect_files               # doctest: +SKIP
>>> with client_for("tcp://10.0.0.5:8786") as client:              # doctest: +SKIP
...     run = run_batch(collect_files(["examples/coursework"]), Options(timeout=60), client)
>>> print(run.summary())                                            # doctest: +SKIP
"""

from __future__ import annotations

import contextlib
import hashlib
import logging
import os
import shlex
import sys
import tempfile
import time
from pathlib import Path

from .errors import HamcheckError, UsageError

__all__ = [
    "CONNECT_TIMEOUT",
    "ClusterError",
    "SHIP_FILE_BYTES",
    "SHIP_DATA_BYTES",
    "client_for",
    "connect",
    "gather_in_order",
    "local_cluster",
    "run_batch",
    "ship_folders",
]

#: Seconds to reach a scheduler (dask's own default is 30 s; an address typed by
#: hand that answers not within 10 s on a local network is almost surely wrong).
CONNECT_TIMEOUT = 10.0

#: Seconds to wait for a reached scheduler to have at least one worker.
WORKER_TIMEOUT = 30.0

#: Files larger than this are not shipped (a model file is a few kB).
SHIP_FILE_BYTES = 16 * 2**20

#: Non-Python files of a folder (data a model reads beside itself) are shipped
#: while their total stays below this; ``*.py`` files are always shipped.
SHIP_DATA_BYTES = 32 * 2**20


class ClusterError(HamcheckError, ConnectionError):
    """A Dask scheduler could not be reached, has no workers, or its workers cannot run hamcheck."""


def _distributed():
    try:
        import distributed
    except ImportError:
        raise UsageError(
            "running on a Dask cluster needs dask's distributed scheduler, an optional extra: "
            "pip install 'hamcheck[cluster]'"
        ) from None
    return distributed


@contextlib.contextmanager
def _quiet():
    """Dask logs every failed connection attempt; the caller reports one line instead."""
    loggers = [logging.getLogger(n) for n in ("distributed", "distributed.client", "distributed.core", "distributed.comm")]
    levels = [lg.level for lg in loggers]
    for lg in loggers:
        lg.setLevel(logging.CRITICAL)
    try:
        yield
    finally:
        for lg, lv in zip(loggers, levels):
            lg.setLevel(lv)


def local_cluster(workers: int, *, memory_limit="auto", threads: int = 1):
    """An embedded cluster of ``workers`` local processes on the loopback interface (no dashboard)."""
    if isinstance(workers, bool) or not isinstance(workers, int) or workers < 1:
        raise UsageError(f"workers must be a positive integer; got {workers!r}")
    distributed = _distributed()
    return distributed.LocalCluster(
        n_workers=workers, threads_per_worker=threads, processes=True, host="127.0.0.1",
        dashboard_address=None, memory_limit=memory_limit, silence_logs=logging.ERROR,
        # no dashboard, and the scheduler's small HTTP server (health routes) on a free loopback port
        scheduler_kwargs={"dashboard": False, "dashboard_address": "127.0.0.1:0"},
    )


def connect(address: str, *, timeout: float | None = None):
    """A client on the scheduler at ``address`` (``tcp://host:port`` or ``host:port``), checked to have
    a worker that can import hamcheck; anything else is one :class:`ClusterError` line.
    ``timeout`` defaults to :data:`CONNECT_TIMEOUT`."""
    distributed = _distributed()
    timeout = CONNECT_TIMEOUT if timeout is None else timeout
    with _quiet():
        try:
            client = distributed.Client(address, timeout=timeout, set_as_default=False)
        except (OSError, TimeoutError, ValueError, TypeError) as exc:
            reason = " ".join(str(exc).split()) or type(exc).__name__
            raise ClusterError(
                f"cannot reach the Dask scheduler at {address} within {timeout:g} s ({reason[:160]}); "
                "check the address, or start one with `dask scheduler` and `dask worker ADDRESS`"
            ) from None
    try:
        _check_workers(client, address)
    except BaseException:
        client.close()
        raise
    return client


def _worker_probe():
    import hamcheck

    return hamcheck.__version__


def _check_workers(client, address):
    from . import __version__

    try:
        client.wait_for_workers(1, timeout=WORKER_TIMEOUT)
    except (TimeoutError, OSError):
        raise ClusterError(f"the Dask scheduler at {address} has no workers (waited {WORKER_TIMEOUT:g} s); start some with `dask worker {address}`") from None
    try:
        version = client.submit(_worker_probe, pure=False).result(timeout=WORKER_TIMEOUT)
    except Exception as exc:
        raise ClusterError(
            f"the Dask workers at {address} cannot run hamcheck ({type(exc).__name__}: {' '.join(str(exc).split())[:160]}); "
            "install the same hamcheck on the workers"
        ) from None
    if version != __version__:
        print(f"hamcheck: the workers at {address} run hamcheck {version}, this is {__version__}", file=sys.stderr)


@contextlib.contextmanager
def client_for(scheduler: str | None = None, *, workers: int | None = None):
    """``None`` when neither is given (run here); else a client on ``scheduler``, or on an embedded
    cluster of ``workers`` processes. Closes what it opened."""
    if scheduler is None and workers is None:
        yield None
        return
    if scheduler is not None:
        client = connect(scheduler)
        try:
            yield client
        finally:
            client.close()
        return
    distributed = _distributed()
    with _quiet(), local_cluster(workers) as cluster, distributed.Client(cluster, set_as_default=False) as client:
        yield client


def gather_in_order(futures, *, what: str = "a task"):
    """Results of ``futures`` in submission order; a task that raised re-raises here, a lost worker
    is one :class:`ClusterError` naming ``what``."""
    distributed = _distributed()
    out = []
    try:
        for f in futures:
            try:
                out.append(f.result())
            except distributed.client.FutureCancelledError as exc:
                raise ClusterError(f"{what} was cancelled on the cluster ({exc})") from None
            except distributed.scheduler.KilledWorker as exc:
                raise ClusterError(f"{what} killed every worker that ran it ({exc})") from None
    except BaseException:
        for f in futures:
            f.cancel()
        raise
    return out


# -------------------------------------------------------------- shipping
def ship_folders(files, warn=None) -> dict:
    """``{folder: {"digest", "files": {name: bytes}}}`` for the folders of ``files``: their ``*.py``
    files and, while small, the other files directly inside (helpers and data beside a model)."""
    warn = warn or (lambda line: print(f"hamcheck: {line}", file=sys.stderr))
    bundles = {}
    for f in files:
        folder = Path(f).resolve().parent
        if folder in bundles:
            continue
        content, data = {}, 0
        entries = sorted(folder.iterdir(), key=lambda p: (p.suffix != ".py", p.name))
        for p in entries:
            try:
                if not p.is_file():
                    continue
                size = p.stat().st_size
                if size > SHIP_FILE_BYTES or (p.suffix != ".py" and data + size > SHIP_DATA_BYTES):
                    if p.suffix == ".py":
                        warn(f"{p}: not shipped to the workers (larger than {SHIP_FILE_BYTES // 2**20} MiB)")
                    continue
                content[p.name] = p.read_bytes()
                data += size if p.suffix != ".py" else 0
            except OSError:
                continue  # unreadable: the file that needs it reports the failure
        digest = hashlib.sha256()
        for name in sorted(content):
            digest.update(os.fsencode(name) + b"\0" + hashlib.sha256(content[name]).digest())
        bundles[folder] = {"digest": digest.hexdigest(), "files": content}
    return bundles


def _materialise(bundle) -> Path:
    """The bundle's files in a private folder of this worker, written once per content digest."""
    root = Path(tempfile.gettempdir()) / f"hamcheck-shipped-{os.getuid() if hasattr(os, 'getuid') else 'u'}"
    root.mkdir(mode=0o700, exist_ok=True)
    target = root / bundle["digest"]
    if not target.exists():
        tmp = Path(tempfile.mkdtemp(dir=root, prefix=".incoming-"))
        for name, data in bundle["files"].items():
            (tmp / name).write_bytes(data)
        try:
            os.rename(tmp, target)
        except OSError:  # another task of this worker got there first
            import shutil

            shutil.rmtree(tmp, ignore_errors=True)
    return target


def _check_shipped(bundle, name: str, shown: str, options):
    """One task on a worker: write the folder, check ``name`` in a child process, return plain rows."""
    from .batch import run_one_isolated

    folder = _materialise(bundle)
    with tempfile.TemporaryDirectory(prefix="hamcheck-task-") as work:
        outcomes, reports, warnings = run_one_isolated(folder / name, options, Path(work), shown=shown)
    return [o.to_dict() for o in outcomes], [r.to_dict() for r in reports], warnings


# ------------------------------------------------------------------ batch
def run_batch(files, options, client, *, echo=None, progress=None, warn=None, label: str | None = None):
    """Check each file on the cluster of ``client``, each in its own child process under the limits.

    Same rows, summary and exit code as :func:`hamcheck.batch.run_isolated`;
    ``echo(report)`` and ``progress`` as results arrive (completion order).
    """
    from .batch import Progress, display_path, file_done, in_file_order
    from .report import Outcome, Report, RunReport

    distributed = _distributed()
    t0 = time.monotonic()
    warn = warn or (lambda line: print(f"hamcheck: {line}", file=sys.stderr))
    progress = progress or Progress(len(files), enabled=False)
    bundles = ship_folders(files, warn)
    scattered = {folder: client.scatter(b, hash=True) for folder, b in bundles.items()}
    futures = {}
    for i, f in enumerate(files):
        shown = display_path(f)
        fut = client.submit(_check_shipped, scattered[Path(f).resolve().parent], Path(f).name, shown, options,
                            pure=False, priority=-i, key=f"hamcheck-file-{i}-{os.urandom(4).hex()}")
        futures[fut] = (i, shown)
    per_file = {}
    try:
        for done, fut in enumerate(distributed.as_completed(list(futures), loop=client.loop), 1):
            i, shown = futures[fut]
            progress.step(done, shown)
            try:
                outs, reps, warnings = fut.result()
                outs, reps = [Outcome.from_dict(o) for o in outs], [Report.from_dict(r) for r in reps]
            except Exception as exc:
                why = _lost(exc, distributed)
                warnings = [f"{shown}: {why}"]
                replay = f"hamcheck check {shlex.quote(shown)} --isolate --timeout {options.timeout:g} --memory {options.memory_gb:g}"
                outs, reps = [Outcome(shown, None, "crashed", message=why, replay=replay)], []
            file_done(per_file, i, outs, reps, warnings, warn, echo)
    except BaseException:
        client.cancel(list(futures))
        raise
    progress.done()
    outcomes, reports = in_file_order(per_file)
    opts = options.to_dict() | {"isolate": True, "scheduler": label or str(client.scheduler.address)}
    return RunReport(outcomes, reports, opts, time.monotonic() - t0)


def _lost(exc, distributed) -> str:
    if isinstance(exc, distributed.scheduler.KilledWorker):
        return "the Dask worker checking this file died (every retry too): the file may kill its parent process"
    return f"the Dask task checking this file failed: {type(exc).__name__}: {' '.join(str(exc).split())[:160]}"
