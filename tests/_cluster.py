"""A 2-worker Dask cluster for the tests: loopback only, worker processes, small memory limits.

Started once per test module (a module-scoped fixture enters :func:`two_workers`) and closed after it.
"""

import contextlib

import pytest

#: Per worker: a worker that checks a model in-process holds jax (~0.5 GiB resident).
MEMORY_LIMIT = "1.5GiB"


@contextlib.contextmanager
def two_workers(allowed_failures=None):
    """``(cluster, client)``; ``allowed_failures`` sets how often the scheduler reruns a task whose
    worker died before giving up (dask's default is 3)."""
    distributed = pytest.importorskip("distributed")
    import dask

    from hamcheck.distributed import local_cluster

    config = {} if allowed_failures is None else {"distributed.scheduler.allowed-failures": allowed_failures}
    with dask.config.set(config), local_cluster(2, memory_limit=MEMORY_LIMIT) as cluster, \
            distributed.Client(cluster, set_as_default=False) as client:
        yield cluster, client
