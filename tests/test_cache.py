"""hamcheck.cache: one registry of compiled programs; jax's persistent cache, safe when broken.

Facts relied on (common practice, jax documentation on the persistent compilation cache):
a program is found again only for identical lowered HLO and options, so a changed function
compiles anew.
"""

import gc
import os
import subprocess
import sys
import textwrap

import numpy as np
import pytest

from hamcheck import cache


class Owner:
    pass


def test_compiled_builds_once_per_owner_and_key_and_forgets_dead_owners():
    calls = []
    a, b = Owner(), Owner()
    for owner in (a, a, b):
        cache.compiled(owner, "k", lambda o: calls.append(1) or len(calls))
    assert len(calls) == 2
    n = len(cache._PER_OWNER)
    del a
    gc.collect()
    assert len(cache._PER_OWNER) == n - 1


def test_clear_empties_every_registered_cache():
    calls = []

    @cache.memoized(maxsize=4)
    def square(v):
        calls.append(v)
        return v * v

    square(3), square(3)
    o = Owner()
    cache.compiled(o, "k", lambda _: 1)
    cache.clear()
    square(3)
    assert calls == [3, 3] and o not in cache._PER_OWNER


SCRIPT = textwrap.dedent('''
    import warnings
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        import hamcheck
        from hamcheck import cache
        import jax, jax.numpy as jnp
        k = float(__import__("sys").argv[1])
        f = jax.jit(lambda x: jnp.sin(x) * k)
        out = cache.compile_lowered(f.lower(jnp.ones(3)))(jnp.ones(3))
    print("DIR", cache.persistent_cache_dir())
    print("VALUE", float(out[0]))
    for w in seen:
        print("WARN", w.category.__name__, w.message)
''')


def _run(env_dir, k="2.0"):
    env = dict(os.environ)
    if env_dir is None:
        env.pop("HAMCHECK_CACHE_DIR", None)
    else:
        env["HAMCHECK_CACHE_DIR"] = str(env_dir)
    proc = subprocess.run([sys.executable, "-c", SCRIPT, k], capture_output=True, text=True, env=env, timeout=300)
    assert proc.returncode == 0, proc.stderr[-3000:]
    return proc.stdout


def _entries(folder):
    return sorted(p.name for p in folder.iterdir() if not p.name.startswith("."))


@pytest.mark.slow
def test_persistent_cache_writes_reuses_and_never_serves_a_changed_program(tmp_path):
    folder = tmp_path / "cache"
    out = _run(folder)
    assert f"DIR {folder}" in out and "WARN" not in out
    first = _entries(folder)
    assert first, "nothing was written to the cache folder"
    again = _run(folder)
    assert _entries(folder) == first and "VALUE 1.68" in again  # 2 sin(1) = 1.6829...
    changed = _run(folder, k="3.0")  # another constant: another program, never the stale one
    assert "VALUE 2.52" in changed and len(_entries(folder)) > len(first)  # 3 sin(1) = 2.5244...


@pytest.mark.slow
def test_empty_variable_turns_the_cache_off(tmp_path):
    assert "DIR None" in _run("")


@pytest.mark.slow
def test_unwritable_or_corrupt_folder_gives_one_warning_and_is_ignored(tmp_path):
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    out = _run(blocker / "sub")
    assert out.count("WARN CacheWarning") == 1 and "cannot be written" in out and "DIR None" in out
    assert "VALUE 1.68" in out
    folder = tmp_path / "cache"
    _run(folder)
    for p in folder.iterdir():  # corrupt every entry
        if not p.name.startswith("."):
            p.write_bytes(b"garbage")
    out = _run(folder)
    assert out.count("WARN CacheWarning") == 1 and "cannot be read" in out, out
    assert "VALUE 1.68" in out and out.count("WARN") == 1


def test_programs_with_large_constants_are_never_stored():
    """Scanning and serializing CP^256's programs (5 GB of constants in their code) ran out of 24 GiB
    (measured): above cache.STORE_MAX_CONSTANTS a program is marked and store_program skips it."""
    import jax
    import jax.numpy as jnp

    from hamcheck import cache

    # a factor no earlier run compiled, so jax's cache (the other reason to mark a program) cannot serve it
    fresh = float(np.random.default_rng().uniform(1.0, 2.0))
    at_limit = cache.compile_lowered(jax.jit(lambda x: x * fresh).lower(jnp.ones(5)), None, constants=cache.STORE_MAX_CONSTANTS)
    large = cache.compile_lowered(jax.jit(lambda x: x * 4.0).lower(jnp.ones(5)), None, constants=cache.STORE_MAX_CONSTANTS + 1)
    assert large in cache._NOT_STORED and float(large(jnp.ones(5))[0]) == 4.0
    assert at_limit not in cache._NOT_STORED
