"""Reproducer: jaxlib's CPU runtime deadlocks on vmapped (batched) LAPACK calls run from two threads.

Two jitted programs map a per-point function over 64 points with
``jax.lax.map(..., batch_size=64)`` (one vmapped batch: batched linear solves and
a batched Hermitian eigenvalue solve, as in the checks of CP^n). Each of two
Python threads runs both programs, ``--reps`` times; the script prints the wall
time of each round. Measured with jaxlib 0.10.2 on a 2-core machine:

* ``--mode vmap --threads 2``: the first round finishes, the second never does
  (every thread idle, the results never ready);
* ``--mode vmap --threads 2`` with ``XLA_FLAGS=--xla_cpu_multi_thread_eigen=false``: no hang;
* ``--mode scan --threads 2`` (the points one at a time, unbatched LAPACK calls): no hang;
* ``--mode vmap --threads 1``: no hang here, but hamcheck's full check of CP^8
  (two programs, flow and the rest) hung on its second run in one thread.

So ``check()`` maps points with a plain scan (``Settings.max_batch = 1``) and uses
both cores by running chunks of points in parallel threads. Run each case in its
own process with a time limit:

    timeout 60 python benchmarks/repro_batched_lapack.py --mode vmap --threads 2
"""

import argparse
import threading
import time

import jax
import jax.numpy as jnp
import numpy as np

jax.config.update("jax_enable_x64", True)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--dim", type=int, default=16)
    ap.add_argument("--points", type=int, default=64)
    ap.add_argument("--reps", type=int, default=10)
    ap.add_argument("--threads", type=int, default=2)
    ap.add_argument("--mode", choices=("vmap", "scan"), default="vmap")
    args = ap.parse_args()
    d, n = args.dim, args.points
    ones = jnp.ones(d - 1)

    def form(x):  # a nondegenerate antisymmetric matrix depending on the point
        return jnp.outer(x, x[::-1]) - jnp.outer(x[::-1], x) + jnp.diag(ones, 1) - jnp.diag(ones, -1)

    def spectrum_and_solve(x):
        W = form(x)
        return jnp.sum(jnp.linalg.eigvalsh(1j * W)) + jnp.sum(jnp.linalg.solve(W.T, x))

    def steps(x):  # eight unrolled steps, each a linear solve (like the flow check's RK4)
        y = x
        for _ in range(8):
            y = y + 0.01 * jnp.linalg.solve(form(y).T, x)
        return y

    batch = n if args.mode == "vmap" else None
    programs = [jax.jit(lambda X, f=f: jax.lax.map(f, X, batch_size=batch)) for f in (spectrum_and_solve, steps)]
    X = jnp.asarray(np.random.default_rng(0).standard_normal((n, d)))

    def run(i):
        for program in programs:
            program(X + i).block_until_ready()

    print(f"mode {args.mode}, {args.threads} thread(s), dim {d}, {n} points; jax {jax.__version__}")
    for i in range(args.reps):
        t = time.perf_counter()
        workers = [threading.Thread(target=run, args=(i,)) for _ in range(args.threads)]
        for w in workers:
            w.start()
        for w in workers:
            w.join()
        print(f"round {i}: {time.perf_counter() - t:.3f} s", flush=True)


if __name__ == "__main__":
    main()
