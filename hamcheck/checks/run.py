"""Running the checks: sample points, map kernels over them, diagnose, report.

:func:`check` is the one entry point. It loops over the registered checks and
reads everything from their :class:`~hamcheck.checks.Check` records (probes,
``applies``, tolerance, comparison direction, residual hook, search hook,
diagnosis); it never branches on a check's name. With autodiff all selected kernels run
inside *one* ``jax.jit`` (one compilation per call, never one per point),
mapped over the points with ``jax.lax.map`` (sequentially by default; vmapped
batches sized to a memory budget when ``Settings.max_batch`` allows). If tracing that combined program fails, each check is traced
alone so the failure is pinned to a check and the others still run. With
finite differences the kernels run eagerly point by point and an exception at
one point is reported while the other points are still checked.
"""

from __future__ import annotations

import contextlib
import dataclasses
import os
import shlex
import time
import zlib
from dataclasses import dataclass

import numpy as np

from .._jax import QUICK_XLA, jax, jnp
from ..cache import compile_lowered, compiled, has_compiled, lower_program, parallel_map, store_program, stored_program
from ..diagnose import Evidence
from ..errors import UsageError
from ..model import Model
from ..numerics import FINITE_DIFFERENCE_TOLERANCES, TOLERANCES, Tolerances
from ..report import CheckResult, Finding, Report
from . import _registry
from ._fingerprint import program_digest
from ._shared import SharedPoint

__all__ = ["check", "Settings", "replay_command"]


@dataclass(frozen=True)
class Settings:
    """How hard the checks probe (not tolerances: those live in :class:`Tolerances`).

    Attributes
    ----------
    pairs: random direction pairs per point for closedness above ``full_tensor_max_dim``.
    probes: random generator combinations per point for ``action`` and ``invariant``.
    group_scale: size of sampled group elements ``exp(scale * N(0, 1))``; small
        enough that sampled points stay inside typical charts.
    full_tensor_max_dim: largest dim for which closedness uses the full
        derivative tensor (about 3 dim^3 doubles per point).
    search_starts: local searches for near-degenerate points started from the
        worst samples (0 disables the search; the report then says so).
    memory_budget: bytes of intermediate arrays per vmapped batch of points.
    fast_compile: compile with XLA's cheap optimisation level (see FAST_COMPILE).
    workers: threads that compile the programs and run chunks of the points in
        parallel (None: every core the process may use).
    max_batch: most points vmapped together; 1 maps the points sequentially
        (a scan, no vmap). Vmapped batches of LAPACK calls deadlock jaxlib
        0.10.2's CPU runtime when two programs of them run concurrently or
        alternate (benchmarks/repro_batched_lapack.py); the plain scan never
        did. With ``max_batch > 1`` the chunks of points run one after the
        other (one worker). Raise it only where the runtime is known to cope.
    """

    pairs: int = 8
    probes: int = 4
    group_scale: float = 0.5
    full_tensor_max_dim: int = 64
    search_starts: int = 3
    search_iterations: int = 40
    memory_budget: float = 2.0e8
    max_batch: int = 1
    fast_compile: bool = True
    workers: int | None = None


def replay_command(model: Model, seed: int, points: int, check_name: str | None = None) -> str:
    """The command (or call) that reruns one check of one model exactly."""
    only = f" --only {check_name}" if check_name else ""
    if model.source:
        return (
            f"hamcheck check {shlex.quote(model.source)} --model {shlex.quote(model.name)} "
            f"--seed {seed} --points {points}{only}"
        )
    only_py = f", only=[{check_name!r}]" if check_name else ""
    return f"hamcheck.check(<model {model.name!r}>, seed={seed}, points={points}{only_py})"


def _check_rng(seed: int, name: str) -> np.random.Generator:
    return np.random.default_rng([seed, zlib.crc32(name.encode())])


def _sample_points(model: Model, n: int, seed: int):
    rng = np.random.default_rng(seed)
    pts, faults = [], []
    for i in range(n):
        try:
            x = np.asarray(model.sample(rng), dtype=float)
        except Exception as exc:  # user code: report and go on
            faults.append(f"draw {i}: {type(exc).__name__}: {exc}")
            continue
        if x.shape != (model.dim,) or not np.all(np.isfinite(x)):
            faults.append(f"draw {i}: returned {x.shape} {'non-finite' if x.shape == (model.dim,) else ''}")
            continue
        pts.append(x)
    return (np.stack(pts) if pts else np.zeros((0, model.dim))), faults


def _evaluate(model: Model, x, probe):
    """Finiteness of every user function at x (the first thing reported)."""
    out = {
        "form": jnp.all(jnp.isfinite(model.form_at(x))),
        "moment": jnp.all(jnp.isfinite(model.moment_at(x))),
        "vector_fields": jnp.all(jnp.isfinite(model.fields_at(x))),
    }
    return out


def _batch_size(model: Model, n: int, settings: Settings) -> int:
    d, k = model.dim, model.algebra.dim
    per_point = 8.0 * (
        (3 * d**3 if d <= settings.full_tensor_max_dim else 4 * d * d)
        + (settings.pairs + settings.probes + k) * d * d
        + k * k * 4
    )
    return int(max(1, min(n, settings.max_batch, settings.memory_budget // per_point)))


def _first_line(exc: Exception) -> str:
    text = str(exc).strip()
    return f"{type(exc).__name__}: {text.splitlines()[0][:300] if text else ''}"


#: XLA options for the programs a check() call compiles. Compilation, not
#: execution, dominates a check of a small model. Optimisation level 0 without
#: LLVM's expensive passes took the sphere's checks from 10.6 s to 5.8 s of
#: compiling (run time 70 ms -> 53 ms); XLA's classic emitters instead of its
#: newer fusion emitters then halved it again (the sphere's three programs 1.17 s
#: -> 0.52 s of wall time, 1.8 -> 0.7 s of CPU; CP^32 run time 0.61 s -> 0.47 s,
#: residuals of the bundled models equal to round-off, measured 2026-12-04). The
#: heavy work of large models is in BLAS/LAPACK calls these options do not touch.
#: IEEE semantics are unchanged (no fast-math).
FAST_COMPILE = QUICK_XLA


def _pad(tree, n_pad):
    """Repeat the first entry so the leading axis has n_pad entries."""
    def pad(a):
        a = np.asarray(a)
        extra = n_pad - a.shape[0]
        return a if extra == 0 else np.concatenate([a, np.repeat(a[:1], extra, axis=0)])

    return jax.tree_util.tree_map(pad, tree)


def workers_available(settings: Settings) -> int:
    """Threads that run programs: ``settings.workers``, else the cores this process may use."""
    if settings.workers is not None:
        return max(1, int(settings.workers))
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not Linux
        return max(1, os.cpu_count() or 1)


def _programs(checks_by_name, names):
    """The kernels grouped into programs: one shared program, plus one per check with ``own_program``."""
    shared = [nm for nm in names if not getattr(checks_by_name.get(nm), "own_program", False)]
    alone = [[nm] for nm in names if nm not in shared]
    return ([shared] if shared else []) + alone


def _run_traced(model, kernels, xs, probes, settings, checks_by_name=None, family=None):
    """Run the kernels in few jitted programs; on a tracing failure, isolate per kernel.

    The kernels sharing the form and its derivatives run in one program; a check
    with ``own_program`` (whose compilation dominates) gets its own, and the
    programs compile in parallel threads (XLA releases the GIL while compiling).
    The points are split into ``workers`` equal chunks run in parallel threads by
    the same compiled program. Points are padded to whole chunks and batches:
    a remainder would make XLA compile the program twice.

    With a ``family`` (a sweep's member, ``checks/_family.py``) the programs take
    the member's float parameters as an argument and are kept for the whole
    family; if that fails in any way the member is run as a model of its own.
    """
    n = xs.shape[0]
    # vmapped batches of LAPACK calls must not run concurrently (see Settings.max_batch)
    workers = 1 if settings.max_batch > 1 else min(workers_available(settings), n)
    chunk = -(-n // workers)
    batch = _batch_size(model, chunk, settings)
    chunk = -(-chunk // batch) * batch
    n_pad = chunk * workers
    xs_p = _pad(xs, n_pad)
    probes_p = _pad(probes, n_pad)
    options = FAST_COMPILE if settings.fast_compile else None

    def run_all(groups, shared, use_store=True):
        owner = family.scope if shared else model
        theta = jnp.asarray(family.theta) if shared else None

        def lowered(names):
            def program(th, X, P):
                m = family.member(th) if shared else model  # traced parameters: one program for the family

                def per_point(args):
                    x, pr = args
                    view = SharedPoint(m, x)  # form, fields, moment and their linearizations, once per point
                    return {nm: kernels[nm](view, x, pr.get(nm, {})) for nm in names}

                if batch == 1:  # a plain scan: no batched custom calls
                    return jax.lax.map(per_point, (X, P))
                return jax.lax.map(per_point, (X, P), batch_size=batch)

            spec = jax.tree_util.tree_map(
                lambda a: jax.ShapeDtypeStruct((chunk,) + a.shape[1:], a.dtype),
                (xs_p, {nm: probes_p.get(nm, {}) for nm in names}),
            )
            th_spec = jax.ShapeDtypeStruct(theta.shape, theta.dtype) if shared else None
            # one compiled program per model (or family) and layout: re-checking with another seed reuses it
            key = ("checks", tuple(names), batch, settings.fast_compile, str(jax.tree_util.tree_map(lambda a: (a.shape, str(a.dtype)), spec)))
            if shared:
                key = family.program_key(key)
            return key, lambda: lower_program(jax.jit(program), th_spec, *spec)

        keyed = [lowered(names) for names in groups]
        missing = [(key, lower) for key, lower in keyed if not has_compiled(owner, key)]
        # an unchanged model checked before, in any process: its programs come from the store, untraced
        digests = {key: None if shared or not (ours and use_store) else program_digest(model, key, settings) for key, _ in missing}
        lowerings = dict(missing)

        def compile_one(low):
            return compile_lowered(low[0], options, constants=low[1])

        def rebuild(key):  # a stored program that cannot run: compiled anew (cache.FirstRunChecked)
            prog = compile_one(lowerings[key]())
            store_program(digests[key], prog)
            return prog

        found = {key: prog for key in digests if (prog := stored_program(digests[key], lambda k=key: rebuild(k))) is not None}
        # the rest lowered here in turn (tracing holds the GIL), compiled in parallel threads
        todo = {key: lower() for key, lower in missing if key not in found}
        built = parallel_map(compile_one, list(todo.values()), workers_available(settings))
        for key, prog in zip(todo, built):
            store_program(digests[key], prog)
            found[key] = prog
        progs = [compiled(owner, key, lambda _owner, k=key: found[k]) for key, _ in keyed]
        parts = [
            (xs_p[w * chunk:(w + 1) * chunk], jax.tree_util.tree_map(lambda a: a[w * chunk:(w + 1) * chunk], probes_p))
            for w in range(workers)
        ]

        def run_chunk(part):
            X, P = part
            outs = {}
            for names, prog in zip(groups, progs):
                outs.update(jax.block_until_ready(prog(theta, jnp.asarray(X), {nm: jax.tree_util.tree_map(jnp.asarray, P.get(nm, {})) for nm in names})))
            return jax.tree_util.tree_map(np.asarray, outs)

        outs = parallel_map(run_chunk, parts, workers=workers)
        return jax.tree_util.tree_map(lambda *a: np.concatenate(a)[:n], *outs)

    groups = _programs(checks_by_name or {}, list(kernels))
    # the store sees hamcheck's code only: a kernel from elsewhere (a check registered at run time) keeps programs in memory
    ours = all(getattr(k, "__module__", "").startswith("hamcheck.") for k in kernels.values())
    if family is not None and family.shareable:
        try:
            return run_all(groups, True), {}
        except Exception as exc:  # a build that cannot take traced parameters: this shape runs per member
            family.refuse(exc)
    try:
        return run_all(groups, False), {}
    except Exception:
        pass
    results, errors = {}, {}
    for nm in kernels:  # one kernel at a time, each traced and compiled here (never a stored program)
        try:
            results[nm] = run_all([[nm]], False, use_store=False)[nm]
        except Exception as exc:
            errors[nm] = _first_line(exc)
    return results, errors


def _run_eager(model, kernels, xs, probes):
    """Point-by-point (finite differences); an exception costs one point, not the run."""
    results, errors, point_faults = {}, {}, {}
    n = xs.shape[0]
    for nm, kernel in kernels.items():
        rows = [None] * n
        for i in range(n):
            pr = jax.tree_util.tree_map(lambda a: np.asarray(a[i]), probes.get(nm, {}))
            try:
                rows[i] = {k: np.asarray(v) for k, v in kernel(model, xs[i], pr).items()}
            except Exception as exc:
                point_faults.setdefault(nm, []).append((i, _first_line(exc)))
        good = [r for r in rows if r is not None]
        if not good:
            errors[nm] = point_faults[nm][0][1] if nm in point_faults else "no points"
            continue
        template = good[0]
        filled = [r if r is not None else {k: np.full_like(v, np.nan, dtype=float) for k, v in template.items()} for r in rows]
        results[nm] = {k: np.stack([r[k] for r in filled]) for k in template}
    return results, errors, point_faults



def _tolerance(c, tolerances: Tolerances, traced: bool) -> float:
    """The check's field of ``tolerances``; a check registered after import has its own default."""
    if hasattr(tolerances, c.name):
        return tolerances.for_check(c.name)
    return c.tolerance.for_derivatives(traced)


def _selected(only):
    checks = _registry.registered()
    if only is None:
        return list(checks)
    only = [only] if isinstance(only, str) else list(only)
    names = [c.name for c in checks]
    unknown = [o for o in only if o not in names]
    if unknown:
        raise UsageError(f"unknown check name(s) {unknown}; expected some of {names}")
    return [c for c in checks if c.name in only]


def check(
    model: Model,
    *,
    points: int = 32,
    seed: int = 0,
    only=None,
    tolerances: Tolerances | None = None,
    settings: Settings | None = None,
    _family=None,
) -> Report:
    """Check every axiom of ``model`` at ``points`` sampled points.

    Faults inside the model's functions at particular points are reported
    (``non-finite`` and ``raised`` findings), never raised; the remaining
    points are still checked. (``_family`` is for :func:`hamcheck.sweep`: a
    member whose compiled programs its family shares, see ``checks/_family.py``.)

    Example
    -------
    >>> import hamcheck, importlib.util, pathlib
    >>> report = hamcheck.check(hamcheck.models.sphere(), points=16)   # doctest: +SKIP
    >>> report.passed                                                   # doctest: +SKIP
    True
    """
    t0 = time.perf_counter()
    if not isinstance(model, Model):
        raise UsageError(f"check() takes a hamcheck.Model; got {type(model).__name__}")
    if isinstance(points, bool) or not isinstance(points, (int, np.integer)) or points < 1:
        raise UsageError(f"points must be a positive integer; got {points!r}")
    selected = _selected(only)
    settings = settings or Settings()
    if tolerances is None:
        tolerances = TOLERANCES if model.traced else FINITE_DIFFERENCE_TOLERANCES

    findings: list[Finding] = []
    diagnoses: list[Finding] = []

    def replay(name=None):
        return replay_command(model, seed, points, name)

    xs, sample_faults = _sample_points(model, points, seed)
    if sample_faults:
        findings.append(
            Finding(
                "raised",
                f"sample(rng) failed on {len(sample_faults)} of {points} draws ({sample_faults[0]}); "
                f"checking the other {xs.shape[0]}",
                {"faults": sample_faults},
                "sample",
                replay(),
            )
        )
    n = xs.shape[0]

    kernels, probes, skipped = {"_evaluate": _evaluate}, {}, {}
    for c in selected:
        reason = c.applies(model, settings)
        if reason:
            skipped[c.name] = reason
            continue
        kernels[c.name] = c.kernel
        probes[c.name] = c.probes(model, _check_rng(seed, c.name), n, settings) if n else {}
    for c in selected:
        if c.name in kernels and c.prepare is not None and n:
            c.prepare(model, settings)

    errors: dict[str, str] = {}
    point_faults: dict[str, list] = {}
    outputs: dict[str, dict] = {}
    if n:
        if model.traced:
            outputs, errors = _run_traced(model, kernels, xs, probes, settings, {c.name: c for c in selected}, _family)
        else:
            outputs, errors, point_faults = _run_eager(model, kernels, xs, probes)

    base_ok = _finite_user_functions(outputs, errors, xs, findings, diagnoses, replay)
    for fn, faults in point_faults.items():
        findings.append(
            Finding(
                "raised",
                f"the {fn} check raised at {len(faults)} of {n} points (first: point {faults[0][0]}, {faults[0][1]}); "
                "the other points were checked",
                {"points": [xs[i] for i, _ in faults], "errors": [e for _, e in faults]},
                fn,
                replay(fn),
            )
        )

    results: dict[str, CheckResult] = {}
    for c in selected:
        tol = _tolerance(c, tolerances, model.traced)
        result = CheckResult(
            c.name, "error", None, tol, None, "", 0, c.state(model.convention), replay(c.name), compare=c.compare
        )
        if c.name in skipped:
            result = dataclasses.replace(result, status="skip", message=skipped[c.name], replay="")
        elif n == 0:
            result = dataclasses.replace(result, message="no point could be sampled")
        elif c.name in errors:
            result = dataclasses.replace(result, message=f"could not run: {errors[c.name]}")
        else:
            ctx = _Context(model, xs, base_ok, tolerances, settings, c.name in point_faults, replay(c.name))
            with _family.active(model) if _family is not None else contextlib.nullcontext():  # a refine's programs too
                result, found, trust = _judge(c, outputs[c.name], result, ctx)
            findings += found
            diagnoses += trust
        results[c.name] = result

    used = int(base_ok.sum())
    if n and used < max(4, points // 2):
        diagnoses.append(
            Finding(
                "few-points",
                f"only {used} of {points} sampled points had finite values; a pass here is weak evidence. "
                "Narrow sample(rng) to the chart's domain",
                {"finite_points": used},
            )
        )
    if not model.traced:
        diagnoses.append(
            Finding(
                "finite-differences",
                "derivatives by central differences (declared derivatives='finite-differences'): tolerances are "
                "widened to FINITE_DIFFERENCE_TOLERANCES and small mistakes (below ~1e-8 relative) can pass",
                {},
            )
        )
    return Report(
        model.name, model.source, seed, points, model.ops.name, results, findings, diagnoses,
        time.perf_counter() - t0, convention=(model.convention.sign, model.convention.flow),
    )


def _finite_user_functions(outputs, errors, xs, findings, diagnoses, replay) -> np.ndarray:
    """Points where every user function is finite; the others are excluded from every check (and reported)."""
    n = xs.shape[0]
    base_ok = np.ones(n, dtype=bool)
    ev = outputs.get("_evaluate")
    if ev is None:
        if "_evaluate" in errors:
            diagnoses.append(Finding("evaluation", f"could not evaluate the model's functions: {errors['_evaluate']}"))
        return base_ok
    for fn, ok in ev.items():
        ok = np.asarray(ok, dtype=bool)
        bad = np.flatnonzero(~ok)
        if bad.size:
            base_ok &= ok
            findings.append(
                Finding(
                    "non-finite",
                    f"{fn}(x) returned NaN or inf at {bad.size} of {n} points, first at x = "
                    f"{np.array2string(xs[bad[0]], precision=4)}; those points are left out of every check "
                    "and the rest are checked",
                    {"function": fn, "points": xs[bad]},
                    fn,
                    replay(),
                )
            )
    return base_ok


@dataclass(frozen=True)
class _Context:
    """What judging one check's outputs needs besides the check and its outputs."""

    model: Model
    xs: np.ndarray
    base_ok: np.ndarray
    tolerances: Tolerances
    settings: Settings
    raised: bool  # the check raised at some points (already reported)
    replay: str


def _judge(c, out, result: CheckResult, ctx: _Context):
    """Mask, compare, refine and diagnose one check: its result, findings and trust notes."""
    xs, n = ctx.xs, ctx.xs.shape[0]
    res = c.residuals(out)
    ok = ctx.base_ok & np.isfinite(res)
    extra_bad = np.flatnonzero(ctx.base_ok & ~np.isfinite(res))
    findings, trust = [], []
    if extra_bad.size and not ctx.raised:
        # every user function is finite at these points themselves (base_ok): the NaN arose only after the
        # check moved them (a sampled group element, a flow), e.g. out of the chart. That is a limit of the
        # run, not of the model: a trust note, and the model still fails when no point is left (status error)
        trust.append(
            Finding(
                "non-finite",
                f"the {c.name} check produced NaN or inf at {extra_bad.size} of {n} points (first at x = "
                f"{np.array2string(xs[extra_bad[0]], precision=4)}), e.g. a group element moved the point "
                "out of the chart; the other points were checked",
                {"points": xs[extra_bad]},
                c.name,
                ctx.replay,
            )
        )
    if not ok.any():
        return dataclasses.replace(result, message="no point gave a finite residual"), findings, trust
    pts = xs[ok]
    n_checked = int(pts.shape[0])
    sub = {k: np.asarray(v)[ok] for k, v in out.items()}
    r = res[ok]
    search_note = ""
    if c.refine is not None:
        pts, r, search_note = c.refine(ctx.model, pts, r, sub, ctx.settings)
    worst = c.worst(r)
    failed = not c.passes(r[worst], result.tolerance)
    diagnosis = c.diagnose(Evidence(ctx.model, pts, sub, r, result.tolerance, ctx.tolerances, failed, worst))
    message = diagnosis.note or (f"holds at {n_checked} points" if not failed else "fails")
    if search_note:
        message = f"{message}; {search_note}"
    result = dataclasses.replace(
        result, status="fail" if failed else "pass", residual=float(r[worst]),
        worst_point=tuple(float(v) for v in pts[worst]), message=message, points=n_checked,
    )
    findings += [Finding(kind, msg, data, c.name, ctx.replay) for kind, msg, data in diagnosis.findings]
    return result, findings, trust + [Finding(kind, msg, data) for kind, msg, data in diagnosis.trust]
