"""Every cache of compiled programs, in one place, with one :func:`clear`.

Two layers:

* **In memory, per owner.** :func:`compiled` keeps ``build(owner)`` for each
  ``(owner, key)`` while the owner (usually a :class:`~hamcheck.Model`) lives,
  through a weak reference: re-checking a model with another seed reuses its
  programs, and a model that is garbage-collected takes its programs with it.
  :func:`memoized` is ``functools.lru_cache`` registered here, for caches keyed
  on plain values (chart shapes of a resolution study).
* **On disk, across processes**, in a per-user folder (``$XDG_CACHE_HOME/hamcheck/jax``,
  else ``~/.cache/hamcheck/jax``); ``HAMCHECK_CACHE_DIR=/some/folder`` names another
  folder and ``HAMCHECK_CACHE_DIR=`` (empty) turns both off:

  - jax's persistent compilation cache. A program is found again only when its
    lowered HLO, compile options, jax version and devices are identical, so a
    changed model never gets a stale program; but finding it still costs tracing
    and lowering.
  - :func:`stored_program` (subfolder ``programs``): compiled check programs under a
    digest of everything they are made of (``checks/_fingerprint.py``: hamcheck's
    code, the jaxprs of the model's functions with every constant, the layout), so
    re-checking an unchanged model in a new process skips tracing, lowering and
    compiling.

  A folder that cannot be written, or an entry that cannot be read, gives one
  warning and that layer is then ignored for the rest of the process (a damaged
  store is emptied first).

Clear both with ``hamcheck.cache.clear(disk=True)`` or by deleting the folder
(``hamcheck.cache.persistent_cache_dir()`` prints where it is).

>>> from hamcheck import cache
>>> calls = []
>>> class Owner: pass
>>> o = Owner()
>>> cache.compiled(o, "k", lambda owner: calls.append(1) or "program")
'program'
>>> cache.compiled(o, "k", lambda owner: calls.append(1) or "program"), len(calls)
('program', 1)
"""

from __future__ import annotations

import functools
import os
import pickle
import re
import shutil
import threading
import uuid
import warnings
import weakref
from pathlib import Path

__all__ = [
    "CacheWarning", "clear", "compile_lowered", "compiled", "has_compiled", "memoized", "parallel_map", "persistent_cache_dir",
    "store_program", "stored_program",
]

ENV = "HAMCHECK_CACHE_DIR"

_PER_OWNER: "weakref.WeakKeyDictionary[object, dict]" = weakref.WeakKeyDictionary()
_MEMOIZED: list = []
_state = {"dir": None, "owned": False, "configured": False, "warned": False}


class CacheWarning(UserWarning):
    """The persistent compilation cache could not be used; hamcheck goes on without it."""


def compiled(owner, key, build):
    """``build(owner)`` once per ``(owner, key)``; kept while ``owner`` lives."""
    store = _PER_OWNER.setdefault(owner, {})
    if key not in store:
        store[key] = build(owner)
    return store[key]


def has_compiled(owner, key) -> bool:
    """True when :func:`compiled` already holds ``(owner, key)``."""
    return key in _PER_OWNER.get(owner, {})


def parallel_map(fn, items, workers: int = 2):
    """``[fn(item) for item in items]`` in up to ``workers`` threads (jax compiles and runs without the GIL)."""
    items = list(items)
    if len(items) <= 1 or workers <= 1:
        return [fn(item) for item in items]
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(max_workers=min(workers, len(items))) as pool:
        return list(pool.map(fn, items))


def memoized(maxsize: int = 8):
    """``functools.lru_cache(maxsize)`` whose cache :func:`clear` empties."""

    def wrap(fn):
        cached = functools.lru_cache(maxsize=maxsize)(fn)
        _MEMOIZED.append(cached)
        return cached

    return wrap


def clear(disk: bool = False) -> None:
    """Forget every compiled program kept in memory (and, with ``disk=True``, on disk).

    ``disk=True`` empties hamcheck's persistent folder only: a folder that was given
    to jax directly (``jax_compilation_cache_dir``) belongs to the user and is kept.
    """
    _PER_OWNER.clear()
    for fn in _MEMOIZED:
        fn.cache_clear()
    from ._jax import jax

    jax.clear_caches()
    folder = _state["dir"]
    if disk and _state["owned"] and folder is not None and Path(folder).is_dir():
        shutil.rmtree(folder, ignore_errors=True)
        Path(folder).mkdir(parents=True, exist_ok=True)
        _state["store_off"] = False  # an emptied store is usable again


def persistent_cache_dir() -> Path | None:
    """The folder of the persistent compilation cache in use, or None when it is off."""
    return None if _state["dir"] is None else Path(_state["dir"])


def _default_dir() -> Path:
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "hamcheck" / "jax"


def _warn_once(message: str) -> None:
    if not _state["warned"]:
        _state["warned"] = True
        warnings.warn(message, CacheWarning, stacklevel=3)


def configure_persistent_cache(jax) -> None:
    """Turn jax's persistent compilation cache on in hamcheck's folder (called once at import).

    A folder the user already gave jax (``jax_compilation_cache_dir``) is left alone.
    """
    if _state["configured"]:
        return
    _state["configured"] = True
    if jax.config.jax_compilation_cache_dir:
        _state["dir"] = jax.config.jax_compilation_cache_dir
        return
    raw = os.environ.get(ENV)
    if raw is not None and raw.strip() == "":
        return  # HAMCHECK_CACHE_DIR= turns the cache off
    folder = Path(raw).expanduser() if raw else _default_dir()
    try:
        folder.mkdir(parents=True, exist_ok=True)
        probe = folder / f".write-test-{uuid.uuid4().hex}"
        probe.write_bytes(b"ok")
        probe.unlink()
    except OSError as exc:
        _warn_once(
            f"the compilation cache folder {folder} cannot be written ({exc.strerror or exc}); "
            f"going on without it (set {ENV} to a writable folder, or {ENV}= to turn it off)"
        )
        return
    _watch_cache_reads()
    jax.config.update("jax_compilation_cache_dir", str(folder))
    # cache every program: hamcheck's are small and many, each one a fraction of a second
    jax.config.update("jax_persistent_cache_min_compile_time_secs", 0.0)
    jax.config.update("jax_persistent_cache_min_entry_size_bytes", 0)
    _state["dir"] = str(folder)
    _state["owned"] = True


def _disable(jax) -> None:
    from jax._src import compilation_cache  # jax's own reset hook; public config alone keeps the open cache

    jax.config.update("jax_compilation_cache_dir", None)
    compilation_cache.reset_cache()
    _state["dir"] = None


def _watch_cache_reads() -> None:
    """Route jax's per-entry read warnings through :func:`_unreadable` (one warning, cache off).

    jax warns once per unreadable entry, from every compile in the process (its own small
    programs included), so the hook sits where jax reads the cache. If a jax release moves
    that function, the hook is skipped and jax's own warnings stand.
    """
    try:
        from jax._src import compiler
    except ImportError:  # pragma: no cover - depends on the jax release
        return
    original = getattr(compiler, "_cache_read", None)
    if original is None or getattr(original, "_hamcheck_watch", False):
        return

    def watched(*args, **kwargs):
        with warnings.catch_warnings(record=True) as seen:
            warnings.simplefilter("always")
            result = original(*args, **kwargs)
        for w in seen:
            if "persistent compilation cache" in str(w.message):
                _unreadable()
            else:
                warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
        return result

    watched._hamcheck_watch = True
    compiler._cache_read = watched


def _unreadable() -> None:
    from ._jax import jax

    folder = _state["dir"]
    if folder is not None:
        _disable(jax)
    _warn_once(
        f"the compilation cache in {folder} has an entry that cannot be read; going on without "
        f"the cache (clear it with hamcheck.cache.clear(disk=True) or delete the folder)"
    )


#: Subfolder of hamcheck's cache folder holding compiled check programs under their digest.
PROGRAMS = "programs"


def _program_dir() -> Path | None:
    """The program store: only inside a folder hamcheck owns (never a folder given to jax directly)."""
    if _state["dir"] is None or not _state["owned"] or _state.get("store_off"):
        return None
    return Path(_state["dir"]) / PROGRAMS


def _store_failed(what: str, exc: Exception) -> None:
    _state["store_off"] = True
    _warn_once(
        f"the program store in {_state['dir']}/{PROGRAMS} {what} ({type(exc).__name__}: {exc}); "
        "going on without it (clear it with hamcheck.cache.clear(disk=True) or delete the folder)"
    )


#: Custom calls a stored program may make: jax's CPU LAPACK kernels, prepared by :func:`_initialize_lapack`.
_LAPACK = "lapack_"


def _initialize_lapack() -> None:
    """Load the LAPACK function pointers jax's CPU kernels call.

    jax does this while lowering a linear-algebra operation; a program from the store
    is not lowered, and its LAPACK calls would jump through null pointers (a crash,
    measured: a stored ``eigh`` segfaults in a fresh process without this).
    """
    from ._jax import jax, jnp

    try:
        from jax._src.lax import linalg

        linalg.initialize_lapack()
    except (ImportError, AttributeError):  # pragma: no cover - another jax release: lower one solve instead
        jax.jit(jnp.linalg.solve).lower(jnp.ones((1, 1)), jnp.ones((1,)))


def stored_program(digest: str | None, rebuild=None):
    """The compiled program stored under ``digest``, or None (not stored, or no store).

    With ``rebuild`` (a function compiling the program anew), the program is
    returned as a :class:`FirstRunChecked`: an entry that loads but cannot run is
    dropped and replaced by ``rebuild()`` instead of failing the check.

    The store keeps what jax's persistent cache cannot skip: jax looks a program up
    by its lowered text, so a hit there still pays tracing and lowering (most of a
    warm start). ``digest`` comes from ``checks/_fingerprint.py`` and covers
    everything the program is made of; None (opaque code, a sweep's family) or no
    store (``HAMCHECK_CACHE_DIR=``, a folder given to jax) gives None. An entry that
    cannot be read empties the store and gives one :class:`CacheWarning`; the store is
    then left alone for the rest of the process.
    """
    folder = _program_dir()
    if digest is None or folder is None:
        return None
    path = folder / f"{digest}.xla"
    if not path.is_file():
        return None
    from jax.experimental import serialize_executable

    try:
        serialized, in_tree, out_tree = pickle.loads(path.read_bytes())
        _initialize_lapack()
        program = serialize_executable.deserialize_and_load(serialized, in_tree, out_tree)
    except Exception as exc:  # a damaged entry: empty the store (other entries may be damaged too), say so once
        shutil.rmtree(folder, ignore_errors=True)
        _store_failed("had an entry that cannot be read", exc)
        return None
    return program if rebuild is None else FirstRunChecked(program, path, rebuild)


class FirstRunChecked:
    """A stored program whose first run is watched: if it fails, the entry is deleted and the program rebuilt.

    An entry can load and still not run (an executable that lost its kernels gave
    "NOT_FOUND: Function ... not found" only when called). Running it anyway would
    turn a check's programs into a per-kernel fallback on every later run, and a
    search's failing objective into "found nothing". The first call runs under a
    lock (other threads wait for its verdict); later calls go straight through.
    """

    def __init__(self, program, path: Path, rebuild):
        self._program, self._path, self._rebuild = program, path, rebuild
        self._trusted = False
        self._lock = threading.Lock()

    def __call__(self, *args):
        if not self._trusted:
            with self._lock:
                if not self._trusted:
                    from ._jax import jax

                    try:
                        out = jax.block_until_ready(self._program(*args))
                    except Exception as exc:
                        self._path.unlink(missing_ok=True)
                        _warn_once(f"a stored program in {self._path.parent} could not run ({type(exc).__name__}: "
                                   f"{str(exc)[:200]}); it was deleted and compiled anew")
                        self._program = self._rebuild()
                        out = self._program(*args)
                    self._trusted = True
                    return out
        return self._program(*args)


def store_program(digest: str | None, program) -> None:
    """Keep ``program`` (a compiled jax program) under ``digest`` for :func:`stored_program`.

    A program jax's persistent cache served, or one with large constants (see
    :func:`compile_lowered`), is not kept.
    """
    folder = _program_dir()
    if digest is None or folder is None or program in _NOT_STORED:
        return
    from jax.experimental import serialize_executable

    try:
        targets = set(re.findall(r'custom_call_target="([^"]+)"', program.as_text() or ""))
        if any(not t.startswith(_LAPACK) for t in targets):
            return  # a custom call the store does not know how to prepare: compile it each time
        blob = pickle.dumps(serialize_executable.serialize(program))
        folder.mkdir(parents=True, exist_ok=True)
        tmp = folder / f".{digest}.{uuid.uuid4().hex}.tmp"
        tmp.write_bytes(blob)
        os.replace(tmp, folder / f"{digest}.xla")  # atomic: a concurrent reader sees all of an entry or none
    except Exception as exc:
        _store_failed("cannot be written", exc)


#: Programs the store never keeps. (1) Those jax's persistent cache served rather than compiled:
#: such an executable, serialized again, has lost its kernels, and another process that loads it
#: fails with "NOT_FOUND: Function ... not found" (jax 0.10.2 on CPU, reproduced with a 3-line
#: program; a degenerate-point search whose program failed so found nothing). (2) Those whose
#: constants exceed STORE_MAX_CONSTANTS.
_NOT_STORED: "weakref.WeakSet" = weakref.WeakSet()
#: Above this many bytes of constants a program is not stored: scanning and serializing CP^256's
#: check programs (5 GB of constants in their code) ran out of 24 GiB, where the same check without
#: the store peaked at 5.0 GB (measured 2026-12-04); for programs that large, running, not
#: compiling, is what a check waits for.
STORE_MAX_CONSTANTS = 16 * 2**20
_jax_cache_hits = threading.local()  # per compiling thread: jax reports a hit in the thread that compiles
_JAX_CACHE_HIT = "/jax/compilation_cache/cache_hits"


def _count_jax_cache_hit(event: str, **kwargs) -> None:
    if event == _JAX_CACHE_HIT:
        _jax_cache_hits.count = getattr(_jax_cache_hits, "count", 0) + 1


def lower_program(jitted, *specs):
    """``(lowered, constants)``: ``jitted`` lowered at ``specs``, and the bytes of constants its jaxpr
    closes over (``_jax.constants_nbytes``), the arguments :func:`compile_lowered` takes."""
    from ._jax import constants_nbytes

    traced = jitted.trace(*specs)
    return traced.lower(), constants_nbytes(traced.jaxpr)


def compile_lowered(lowered, options=None, constants: int = 0):
    """``lowered.compile(options)``: the one place hamcheck compiles ahead of time.

    ``constants`` is the size of the program's constants in bytes
    (``_jax.constants_nbytes`` of its jaxpr): above ``STORE_MAX_CONSTANTS`` the
    program is marked so :func:`store_program` skips it. A program jax's
    persistent cache served is marked too. Unreadable persistent-cache entries
    become one :class:`CacheWarning` (see :func:`_watch_cache_reads`); jax then
    compiles the program anew.
    """
    if not _state.get("listening"):
        from jax import monitoring

        monitoring.register_event_listener(_count_jax_cache_hit)
        _state["listening"] = True
    before = getattr(_jax_cache_hits, "count", 0)
    program = lowered.compile(options) if options is not None else lowered.compile()
    if getattr(_jax_cache_hits, "count", 0) != before or constants > STORE_MAX_CONSTANTS:
        _NOT_STORED.add(program)
    return program
