"""Single place where hamcheck touches jax's global configuration.

hamcheck computes in float64: round-off floors near 1e-16 are what make the
default tolerances (see ``numerics.py``) meaningful. jax defaults to float32,
so importing hamcheck switches ``jax_enable_x64`` on. The other global settings
are jax's persistent compilation cache, turned on in hamcheck's own folder unless
the user configured one or set ``HAMCHECK_CACHE_DIR=`` (see :mod:`hamcheck.cache`),
and single-threaded OpenBLAS (see :func:`single_threaded_lapack`); platform and
devices are left as the user set them.
"""

import ctypes
import os

#: Set this environment variable (to any thread count) to keep OpenBLAS's own threads.
BLAS_THREADS_ENV = "OPENBLAS_NUM_THREADS"
_SET_THREADS = ("openblas_set_num_threads", "scipy_openblas_set_num_threads",
                "scipy_openblas_set_num_threads64_", "openblas_set_num_threads64_")


def single_threaded_lapack() -> None:
    """Run OpenBLAS (numpy's and scipy's, whose LAPACK jax's CPU linear algebra calls) on one thread.

    Why: jax calls LAPACK from XLA's own worker threads. With OpenBLAS's thread pool on
    top, a jitted vmap of linear solves and eigen/singular value solves never finished
    (CP^8 at 64 points: no result after 150 s; with one OpenBLAS thread 38 s including
    compilation, on a loaded 2-core machine), and a 3x3 ``scipy.linalg.solve`` took
    20 ms instead of 0.05 ms under load (threads spinning for work). hamcheck's
    parallelism is over points instead (``checks.run``). A thread count the user set in
    ``OPENBLAS_NUM_THREADS`` is left alone.
    """
    if BLAS_THREADS_ENV in os.environ:
        return
    os.environ[BLAS_THREADS_ENV] = "1"  # libraries loaded from now on read it
    try:  # libraries already loaded (numpy imported before hamcheck) take the call
        with open("/proc/self/maps") as maps:
            paths = {line.split()[-1] for line in maps if "openblas" in line.lower() and line.rstrip().endswith(".so")}
    except OSError:  # not Linux: the environment variable is all we can do
        return
    for path in sorted(paths):
        try:
            lib = ctypes.CDLL(path)
        except OSError:
            continue
        for name in _SET_THREADS:
            setter = getattr(lib, name, None)
            if setter is not None:
                setter(1)
                break


single_threaded_lapack()

import jax  # noqa: E402

if not jax.config.read("jax_enable_x64"):
    jax.config.update("jax_enable_x64", True)

import jax.numpy as jnp  # noqa: E402

from .cache import configure_persistent_cache  # noqa: E402

configure_persistent_cache(jax)

#: XLA options for the programs hamcheck compiles for a check: optimisation level 0
#: without LLVM's expensive passes, and XLA's classic CPU emitters instead of its
#: fusion emitters. Compiling, not running, is what a check of a small model waits
#: for; IEEE semantics are unchanged (no fast-math). Measurements: ``checks.run.FAST_COMPILE``.
QUICK_XLA = {
    "xla_backend_optimization_level": 0,
    "xla_llvm_disable_expensive_passes": True,
    "xla_cpu_use_fusion_emitters": False,
}


def constants_nbytes(closed_jaxpr) -> int:
    """Bytes of the arrays a traced program closes over, in it and in every program it calls.

    An array held by two of those programs counts twice, as it may be embedded twice.

    >>> import numpy as np
    >>> B = np.ones((8, 8))
    >>> constants_nbytes(jax.jit(lambda x: B @ x).trace(jnp.ones(8)).jaxpr)
    512
    >>> constants_nbytes(jax.jit(lambda x: B @ x + jax.jit(lambda y: B.T @ y)(x)).trace(jnp.ones(8)).jaxpr)
    1024
    """
    seen, total, stack = set(), 0, [closed_jaxpr]
    while stack:
        item = stack.pop()
        if id(item) in seen:
            continue
        seen.add(id(item))
        for c in getattr(item, "consts", ()):
            if id(c) not in seen:
                seen.add(id(c))
                total += int(getattr(c, "nbytes", 0))
        for eqn in getattr(getattr(item, "jaxpr", item), "eqns", ()):
            for value in eqn.params.values():
                for sub in value if isinstance(value, (tuple, list)) else (value,):
                    if hasattr(sub, "eqns") or hasattr(sub, "consts"):
                        stack.append(sub)
    return total


def quick_jit(fun, **kwargs):
    """``jax.jit(fun, compiler_options=QUICK_XLA)``, for hamcheck's own top-level programs.

    Only at the top level: jax refuses compiler options on a jit called inside
    another jit, so a model's own functions are never wrapped with it.
    """
    return jax.jit(fun, compiler_options=QUICK_XLA, **kwargs)


__all__ = ["jax", "jnp", "single_threaded_lapack", "QUICK_XLA", "quick_jit", "constants_nbytes"]
