"""Running the checks: sample points, map kernels over them, diagnose, report.

:func:`check` is the one entry point. With autodiff all selected kernels run
inside *one* ``jax.jit`` (one compilation per call, never one per point),
mapped over the points with ``jax.lax.map`` (sequentially by default; vmapped
batches sized to a memory budget when ``Settings.max_batch`` allows). If tracing that combined program fails, each check is traced
alone so the failure is pinned to a check and the others still run. With
finite differences the kernels run eagerly point by point and an exception at
one point is reported while the other points are still checked.
"""

from __future__ import annotations

import shlex
import time
import zlib
from dataclasses import dataclass

import numpy as np

from .cache import compile_lowered, compiled
from ._jax import jax, jnp
from .checks import CHECK_NAMES, CHECKS
from .diagnose import DIAGNOSES, Evidence
from .errors import UsageError
from .model import Model
from .numerics import FINITE_DIFFERENCE_TOLERANCES, TOLERANCES, Tolerances
from .report import CheckResult, Finding, Report

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
    max_batch: most points vmapped together; 1 maps the points sequentially
        (a scan, no vmap). Vmapped batches of CP^n checks (batched linear solves
        and SVDs) deadlocked jaxlib 0.10.2's CPU runtime on this 2-core machine
        (64 points at dim 16, 16 points at dim 32); sequential mapping never did,
        and cost the same (0.16 s for 64 points at dim 16) since compilation
        dominates. Raise it only where the runtime is known to cope.
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


#: XLA options for the one program a check() call compiles. Compilation, not
#: execution, dominates a check of a small model (measured: 10.6 s -> 5.8 s to
#: compile the sphere's checks; run time 70 ms -> 53 ms); the heavy work of large
#: models is in BLAS/LAPACK calls these options do not touch. IEEE semantics are
#: unchanged (no fast-math).
FAST_COMPILE = {"xla_backend_optimization_level": 0, "xla_llvm_disable_expensive_passes": True}


def _pad(tree, n_pad):
    """Repeat the first entry so the leading axis has n_pad entries."""
    def pad(a):
        a = np.asarray(a)
        extra = n_pad - a.shape[0]
        return a if extra == 0 else np.concatenate([a, np.repeat(a[:1], extra, axis=0)])

    return jax.tree_util.tree_map(pad, tree)


def _run_traced(model, kernels, xs, probes, settings):
    """Run all kernels in one jit; on a tracing failure, isolate per kernel.

    Points are padded to a whole number of equal batches: a remainder batch
    would make XLA compile the whole program twice.
    """
    n = xs.shape[0]
    batch = _batch_size(model, n, settings)
    n_pad = -(-n // batch) * batch
    xs_j = jnp.asarray(_pad(xs, n_pad))
    probes_j = jax.tree_util.tree_map(jnp.asarray, _pad(probes, n_pad))

    def run(names):
        def per_point(args):
            x, pr = args
            return {nm: kernels[nm](model, x, pr.get(nm, {})) for nm in names}

        args = (xs_j, {nm: probes_j.get(nm, {}) for nm in names})
        # one compiled program per model and layout: re-checking with another seed reuses it
        shapes = jax.tree_util.tree_map(lambda a: (a.shape, str(a.dtype)), args)
        key = (tuple(names), batch, settings.fast_compile, str(shapes))
        def build(_model):
            if batch == 1:  # a plain scan: no batched custom calls (see Settings.max_batch)
                fn = jax.jit(lambda X, P: jax.lax.map(per_point, (X, P)))
            else:
                fn = jax.jit(lambda X, P: jax.lax.map(per_point, (X, P), batch_size=batch))
            return compile_lowered(fn.lower(*args), FAST_COMPILE if settings.fast_compile else None)

        out = compiled(model, ("checks", key), build)(*args)
        return jax.tree_util.tree_map(lambda a: np.asarray(a)[:n], out)

    try:
        return run(list(kernels)), {}
    except Exception:
        pass
    results, errors = {}, {}
    for nm in kernels:
        try:
            results[nm] = run([nm])[nm]
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


def check(
    model: Model,
    *,
    points: int = 32,
    seed: int = 0,
    only=None,
    tolerances: Tolerances | None = None,
    settings: Settings | None = None,
) -> Report:
    """Check every axiom of ``model`` at ``points`` sampled points.

    Faults inside the model's functions at particular points are reported
    (``non-finite`` and ``raised`` findings), never raised; the remaining
    points are still checked.

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
    if only is not None:
        only = [only] if isinstance(only, str) else list(only)
        unknown = [o for o in only if o not in CHECK_NAMES]
        if unknown:
            raise UsageError(f"unknown check name(s) {unknown}; expected some of {list(CHECK_NAMES)}")
    settings = settings or Settings()
    if tolerances is None:
        tolerances = TOLERANCES if model.traced else FINITE_DIFFERENCE_TOLERANCES
    selected = [c for c in CHECKS if only is None or c.name in only]

    findings: list[Finding] = []
    diagnoses: list[Finding] = []
    results: dict[str, CheckResult] = {}

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

    errors: dict[str, str] = {}
    point_faults: dict[str, list] = {}
    outputs: dict[str, dict] = {}
    if n:
        if model.traced:
            outputs, errors = _run_traced(model, kernels, xs, probes, settings)
        else:
            outputs, errors, point_faults = _run_eager(model, kernels, xs, probes)

    # points where a user function is non-finite are excluded everywhere
    base_ok = np.ones(n, dtype=bool)
    ev = outputs.get("_evaluate")
    if ev is not None:
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
    elif "_evaluate" in errors:
        diagnoses.append(Finding("evaluation", f"could not evaluate the model's functions: {errors['_evaluate']}"))

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

    for c in selected:
        tol = tolerances.for_check(c.name)
        if c.name in skipped:
            results[c.name] = CheckResult(c.name, "skip", None, tol, None, skipped[c.name], 0, c.statement)
            continue
        if n == 0:
            results[c.name] = CheckResult(
                c.name, "error", None, tol, None, "no point could be sampled", 0, c.statement, replay(c.name)
            )
            continue
        if c.name in errors:
            results[c.name] = CheckResult(
                c.name,
                "error",
                None,
                tol,
                None,
                f"could not run: {errors[c.name]}",
                0,
                c.statement,
                replay(c.name),
            )
            continue
        out = outputs[c.name]
        res = np.asarray(out["residual"], dtype=float)
        if c.name == "nondegenerate":
            res = _relative_to_typical_scale(out)
        ok = base_ok & np.isfinite(res)
        extra_bad = np.flatnonzero(base_ok & ~np.isfinite(res))
        if extra_bad.size and c.name not in point_faults:
            findings.append(
                Finding(
                    "non-finite",
                    f"the {c.name} check produced NaN or inf at {extra_bad.size} of {n} points (first at x = "
                    f"{np.array2string(xs[extra_bad[0]], precision=4)}), e.g. a group element moved the point "
                    "out of the chart; the other points were checked",
                    {"points": xs[extra_bad]},
                    c.name,
                    replay(c.name),
                )
            )
        if not ok.any():
            results[c.name] = CheckResult(
                c.name, "error", None, tol, None, "no point gave a finite residual", 0, c.statement, replay(c.name)
            )
            continue
        pts = xs[ok]
        n_checked = int(pts.shape[0])
        sub = {k: np.asarray(v)[ok] for k, v in out.items()}
        r = res[ok]
        if c.name == "nondegenerate":
            pts, r, search_note = _search_degenerate(model, pts, r, sub, settings)
        worst = int(np.argmin(r) if c.higher_is_better else np.argmax(r))
        failed = bool(r[worst] < tol) if c.higher_is_better else bool(r[worst] > tol)
        evidence = Evidence(model, pts, sub, r, tol, tolerances, failed, worst)
        note, found = DIAGNOSES[c.name](evidence)
        status = "fail" if failed else "pass"
        message = note or (f"holds at {n_checked} points" if not failed else "fails")
        if c.name == "nondegenerate":
            message = f"{message}; {search_note}" if search_note else message
            if not failed and r[worst] < tolerances.ill_conditioned:
                diagnoses.append(
                    Finding(
                        "ill-conditioned",
                        f"omega is nearly degenerate at x = {np.array2string(pts[worst], precision=4)} (relative "
                        f"singular value {r[worst]:.1e}); residuals of other checks there lose about "
                        f"{-np.log10(r[worst]):.0f} digits",
                        {"point": pts[worst], "ratio": r[worst]},
                    )
                )
        results[c.name] = CheckResult(
            c.name, status, float(r[worst]), tol, tuple(float(v) for v in pts[worst]), message, n_checked,
            c.statement, replay(c.name),
        )
        for kind, msg, data in found:
            findings.append(Finding(kind, msg, data, c.name, replay(c.name)))

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


def _relative_to_typical_scale(out) -> np.ndarray:
    """smallest singular value over max(largest here, median largest over points).

    A 2x2 antisymmetric matrix has equal singular values, so the plain ratio
    cannot see a form that shrinks to zero; measuring against the typical size
    of the form over the sample can.
    """
    smax = np.asarray(out["smax"], dtype=float)
    smin = np.asarray(out["residual"], dtype=float) * smax
    finite = np.isfinite(smax)
    typical = np.median(smax[finite]) if finite.any() else 1.0
    return smin / np.maximum(np.maximum(smax, typical), np.finfo(float).tiny)


def _search_degenerate(model, pts, r, out, settings):
    """Local minimisation of the relative smallest singular value from the worst samples."""
    if settings.search_starts <= 0 or pts.shape[0] == 0:
        return pts, r, "no search for degenerate points (search_starts=0)"
    from scipy.optimize import minimize

    typical = float(np.median(out["smax"]))
    lo, hi = pts.min(axis=0), pts.max(axis=0)
    if model.traced:
        def build(model):
            # the typical scale is an argument, so the program is reused across calls
            def ratio_t(x, t):
                s = jnp.linalg.svd(model.form_at(x), compute_uv=False)
                return s[-1] / jnp.maximum(jnp.maximum(s[0], t), 1e-300)

            return jax.jit(jax.value_and_grad(ratio_t))

        grad_fn = compiled(model, "degeneracy-search", build)
        fun = lambda x: grad_fn(x, typical)  # noqa: E731

        def objective(x):
            v, g = fun(jnp.asarray(x))
            v, g = float(v), np.asarray(g, dtype=float)
            return (v, g) if np.isfinite(v) and np.all(np.isfinite(g)) else (1e300, np.zeros_like(x))

        jac = True
    else:
        def objective(x):
            try:
                s = np.linalg.svd(np.asarray(model.form(np.asarray(x)), dtype=float), compute_uv=False)
            except Exception:
                return 1e300
            v = s[-1] / max(s[0], typical, 1e-300)
            return v if np.isfinite(v) else 1e300

        jac = False
    starts = np.argsort(r)[: settings.search_starts if model.dim <= 64 else 1]
    found_x, found_r = [], []
    for i in starts:
        try:
            sol = minimize(
                objective, pts[i], jac=jac, method="L-BFGS-B", bounds=list(zip(lo, hi)),
                options={"maxiter": settings.search_iterations},
            )
        except Exception:
            continue
        if np.isfinite(sol.fun) and sol.fun < 1e299:
            found_x.append(np.asarray(sol.x))
            found_r.append(float(sol.fun))
    if not found_r:
        return pts, r, "search for degenerate points found nothing finite"
    best = int(np.argmin(found_r))
    note = f"search from the {len(starts)} worst samples reached {found_r[best]:.1e}"
    if found_r[best] < r.min():
        pts = np.vstack([pts, found_x[best][None]])
        r = np.append(r, found_r[best])
    return pts, r, note
