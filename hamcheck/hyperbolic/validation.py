"""``check_metric``: is a proposed metric hyperbolic, with the declared cone angles, complete at the circle?

Three checks, reported in hamcheck's vocabulary (:class:`hamcheck.Report`):

* ``liouville``: ``Laplacian u = e^{2u}`` (curvature ``K = -e^{-2u} Laplacian u = -1``) at sampled
  points away from the cone points and the circle; relative residual
  ``|Lap u - e^{2u}| / (|u_xx| + |u_yy| + e^{2u})``; findings ``curvature-sign`` (K = +1),
  ``curvature-scale`` (another constant K), ``not-constant-curvature``.
* ``cone_angles``: each declared angle measured from the mean of u on a small circle:
  ``eps d/d eps <u> = (beta - 1) + Area_g(B_eps) / 2 pi`` (Green's formula with Liouville's
  equation), exact at any eps; finding ``cone-angle`` with the measured ratio.
* ``boundary``: ``u + log(1 - |z|^2) -> log 2`` at the circle (the Poincaré rate), extrapolated
  from ``1 - |z| = s, s/2, s/4``; findings ``incomplete-boundary`` (the limit diverges to
  -infinity: the circle is at finite distance) and ``boundary-scale`` (a finite wrong limit).

>>> from hamcheck import hyperbolic
>>> hyperbolic.check_metric(hyperbolic.poincare_disk(), points=16).passed
True
"""

from __future__ import annotations

import math

import numpy as np

from .._jax import jax, jnp, quick_jit
from ..report import CheckResult, Finding, Report

#: Liouville residual (relative, per point): autodiff second derivatives of
#: closed forms sit at 1e-16..1e-14 (measured); 1e-10 is 1e4 above.
LIOUVILLE_TOL = 1e-10
#: Relative error of a measured cone angle: the Green identity is exact, the
#: quadratures (trapezoid in angle, Gauss in radius) reach ~1e-13.
CONE_TOL = 1e-8
#: |lim (u + log(1 - |z|^2)) - log 2|: Richardson extrapolation from s = 1e-4 leaves
#: O(s^2 log s) ~ 1e-7; 1e-5 is 100 x above.
BOUNDARY_TOL = 1e-5
#: Sampled points stay this far from the circle and from cone points.
EDGE = 0.05


def sample_points(cones, n, rng, r_max: float = 1 - EDGE):
    """n points uniform in ``|z| < r_max`` at least ``EDGE`` (scaled) from every cone point."""
    out = []
    while len(out) < n:
        z = np.sqrt(rng.uniform(0, r_max**2, 4 * n)) * np.exp(1j * rng.uniform(0, 2 * np.pi, 4 * n))
        for c in cones:
            z = z[np.abs(z - c.p) > EDGE * (1 - abs(c.p))]
        out.extend(z.tolist())
    return np.array(out[:n])


def _derivatives(u):
    H = jax.hessian(lambda x, y: u(x, y), argnums=(0, 1))

    def f(x, y):
        h = H(x, y)
        return u(x, y), h[0][0], h[1][1]

    return quick_jit(jax.vmap(f))


def liouville_residuals(u, z):
    """(relative residuals, Laplacian, e^{2u}) at complex points z."""
    uu, uxx, uyy = (np.asarray(a) for a in _derivatives(u)(jnp.asarray(z.real), jnp.asarray(z.imag)))
    e2u = np.exp(2 * uu)
    lap = uxx + uyy
    return np.abs(lap - e2u) / (np.abs(uxx) + np.abs(uyy) + e2u), lap, e2u


def measure_cone_angle(u, cone, others=(), n_angle: int = 64, n_radius: int = 40):
    """The cone angle at ``cone.p`` from ``beta - 1 = eps <d_r u> - Area_g(B_eps)/2 pi``; returns (alpha, error)."""
    p = cone.p
    room = min([1 - abs(p)] + [abs(o.p - p) for o in others])
    th = 2 * np.pi * (np.arange(n_angle) + 0.5) / n_angle
    grad = quick_jit(jax.vmap(jax.grad(lambda x, y: u(x, y), argnums=(0, 1))))
    uv = quick_jit(jax.vmap(lambda x, y: u(x, y)))
    est = []
    for eps in (1e-3 * room, 2e-3 * room):
        z = p + eps * np.exp(1j * th)
        ux, uy = (np.asarray(a) for a in grad(jnp.asarray(z.real), jnp.asarray(z.imag)))
        slope = eps * np.mean(ux * np.cos(th) + uy * np.sin(th))
        t, w = np.polynomial.legendre.leggauss(n_radius)
        t, w = (t + 1) / 2, w / 2
        b0, area = max(1 + slope, 0.05), 0.0
        r_min = 1e-7 * eps  # closer to p, x - Re p loses the digits of the offset
        for _ in range(3):  # the substitution is exact for the measured exponent: iterate it
            # r^{2 b0} = r_min^{2 b0} + (eps^{2 b0} - r_min^{2 b0}) t makes e^{2u} r dr smooth when u ~ (b0 - 1) log r
            lo, span = r_min ** (2 * b0), eps ** (2 * b0) - r_min ** (2 * b0)
            r = np.concatenate([(lo + span * t) ** (1 / (2 * b0)), [r_min]])
            Z = p + r[:, None] * np.exp(1j * th)[None, :]
            e2u = np.exp(2 * np.asarray(uv(jnp.asarray(Z.real.ravel()), jnp.asarray(Z.imag.ravel())))).reshape(Z.shape)
            g = e2u * (r ** (2 - 2 * b0))[:, None]  # e^{2u} r^{2 - 2 b0}: smooth in t
            inner = np.sum(g[-1]) * lo / (2 * b0) * (2 * np.pi / n_angle)  # disk of radius r_min: leading term
            area = np.sum(w[:, None] * g[:-1]) * span / (2 * b0) * (2 * np.pi / n_angle) + inner
            b0 = max(1 + slope - area / (2 * np.pi), 0.02)
        est.append(1 + slope - area / (2 * np.pi))
    # the inner disk's leading-term approximation is off by at most its own size (it matters for beta << 1)
    return 2 * np.pi * est[0], 2 * np.pi * abs(est[0] - est[1]) + inner


def boundary_limit(u, rng, n_angle: int = 16, s: float = 1e-4):
    """Extrapolated ``lim (u + log(1 - r^2) - log 2)`` at the circle; (limit, error, raw defects)."""
    th = rng.uniform(0, 2 * np.pi, n_angle)
    uv = quick_jit(jax.vmap(lambda x, y: u(x, y)))
    ds = []
    for sk in (s, s / 2, s / 4):
        r = 1 - sk
        vals = np.asarray(uv(jnp.asarray(r * np.cos(th)), jnp.asarray(r * np.sin(th))))
        ds.append(vals + math.log(sk * (2 - sk)) - math.log(2))
    d0, d1, d2 = ds
    lim1, lim2 = 2 * d1 - d0, 2 * d2 - d1  # the defect is linear in s to leading order
    worst = int(np.argmax(np.abs(lim2)))
    return lim2, np.abs(lim2 - lim1), ds, th, worst


def _replay(metric, seed, points, check):
    src = metric.source or "<your script>"
    return f"hamcheck disk {src} --seed {seed} --points {points} --only {check}" if src.endswith(".py") else \
        f"hyperbolic.check_metric(<{metric.name}>, points={points}, seed={seed})  # check {check}"


def check_metric(metric, points: int = 64, seed: int = 0, only=None) -> Report:
    """Validate a :class:`~hamcheck.hyperbolic.Metric`; returns a :class:`hamcheck.Report`."""
    import time

    t0 = time.perf_counter()
    rng = np.random.default_rng(seed)
    results, findings, diagnoses = {}, [], []
    want = (lambda n: only is None or n in only)
    floor = float(getattr(metric.construction, "liouville_floor", metric.liouville_floor) or 0.0)
    if want("liouville"):
        z = sample_points(metric.cones, points, rng)
        res, lap, e2u = liouville_residuals(metric.u, z)
        tol = max(LIOUVILLE_TOL, floor)
        bad = ~np.isfinite(res)
        r = float(np.max(np.where(bad, np.inf, res)))
        i = int(np.argmax(np.where(bad, np.inf, res)))
        note = f" (tolerance raised to the construction's own residual {floor:.1e})" if floor > LIOUVILLE_TOL else ""
        failed = not r <= tol
        results["liouville"] = CheckResult(
            "liouville", "fail" if failed else "pass", r, tol, (float(z[i].real), float(z[i].imag)),
            (f"Laplacian u != e^(2u) at {int(np.sum(res > tol))} of {points} points" if failed
             else f"curvature -1 at {points} points") + note, points,
            "Laplacian u = e^(2u): the metric e^(2u)|dz|^2 has curvature -1 away from the cone points",
            _replay(metric, seed, points, "liouville"))
        if failed:
            lam = float(np.sum(lap * e2u) / np.sum(e2u * e2u))  # least squares Lap u = lam e^{2u}
            spread = float(np.max(np.abs(lap - lam * e2u) / (np.abs(lap) + e2u)))
            data = {"curvature": -lam, "spread": spread, "worst_point": [float(z[i].real), float(z[i].imag)]}
            if spread < 1e3 * tol and abs(lam + 1) < 1e-6:
                kind, msg = "curvature-sign", ("the curvature is +1, not -1 (Laplacian u = -e^(2u)): a spherical metric; "
                                              "a hyperbolic one has Laplacian u = +e^(2u)")
            elif spread < 1e3 * tol:
                kind, msg = "curvature-scale", (f"the curvature is constant {-lam:.6g}, not -1: "
                                               f"add {0.5 * math.log(abs(lam)):.6g} to u (scale the metric by {abs(lam):.6g})"
                                               if lam > 0 else f"the curvature is constant {-lam:.6g} > 0")
            else:
                kind, msg = "not-constant-curvature", (f"the curvature -e^(-2u) Laplacian u varies (relative spread {spread:.1e}); "
                                                      "u does not solve Liouville's equation")
            findings.append(Finding(kind, msg, data, "liouville", _replay(metric, seed, points, "liouville")))
    if want("cone_angles") and metric.cones:
        worst, rows, bad = 0.0, [], []
        for j, c in enumerate(metric.cones):
            others = [o for k, o in enumerate(metric.cones) if k != j]
            alpha, err = measure_cone_angle(metric.u, c, others)
            rel = abs(alpha - c.alpha) / c.alpha
            rows.append((c, alpha, err, rel))
            if not np.isfinite(rel) or rel > CONE_TOL and rel > 10 * err / c.alpha:
                bad.append((c, alpha, err, rel))
            worst = max(worst, rel if np.isfinite(rel) else np.inf)
        if worst > CONE_TOL and not bad:
            diagnoses.append(Finding("cone-angle-unresolved", "the measured cone angles differ from the declared ones "
                                     "by less than the measurement's own error; not counted as a failure",
                                     {"errors": [r[2] for r in rows]}, "cone_angles"))
        cw = max(rows, key=lambda r: r[3] if np.isfinite(r[3]) else np.inf)[0]
        results["cone_angles"] = CheckResult(
            "cone_angles", "fail" if bad else "pass", worst, CONE_TOL, (float(cw.p.real), float(cw.p.imag)),
            "; ".join(f"alpha at {complex(c.p):.3g}: measured {a / math.pi:.10g} pi, declared {c.alpha / math.pi:.10g} pi"
                      for c, a, _, _ in rows), len(rows),
            "each declared cone angle alpha: u = (alpha/2pi - 1) log|z - p| + O(1) near p",
            _replay(metric, seed, points, "cone_angles"))
        for c, a, err, rel in bad:
            findings.append(Finding(
                "cone-angle", f"the cone at {complex(c.p):.4g} has angle {a / math.pi:.8g} pi, not the declared "
                f"{c.alpha / math.pi:.8g} pi (ratio {a / c.alpha:.6g}); fix the coefficient (beta - 1) of log|z - p| in u "
                "or the declared angle", {"p": [c.p.real, c.p.imag], "declared": c.alpha, "measured": a, "ratio": a / c.alpha,
                                          "error": err}, "cone_angles", _replay(metric, seed, points, "cone_angles")))
    if want("boundary"):
        lim, err, ds, th, i = boundary_limit(metric.u, rng)
        r = float(np.max(np.abs(lim)))
        growth = ds[2] - ds[1]  # a log-type divergence changes by k log 2 per halving
        diverges = bool(np.max(np.abs(growth)) > 0.1)
        failed = diverges or (r > BOUNDARY_TOL and r > 10 * float(err.max()))
        wp = (float((1 - 2.5e-5) * math.cos(th[i])), float((1 - 2.5e-5) * math.sin(th[i])))
        results["boundary"] = CheckResult(
            "boundary", "fail" if failed else "pass", float("inf") if diverges else r, BOUNDARY_TOL, wp,
            ("u + log(1 - |z|^2) does not tend to log 2" if failed else "complete at the circle: u + log(1 - |z|^2) -> log 2"),
            len(th), "u + log(1 - |z|^2) -> log 2 at the circle (complete, boundary at infinity, Poincaré rate)",
            _replay(metric, seed, points, "boundary"))
        if failed and diverges:
            k = float(np.median(growth) / math.log(2))
            findings.append(Finding(
                "incomplete-boundary", f"u + log(1 - |z|^2) behaves like {-k:.3g} log(1 - |z|) + const at the circle "
                "instead of tending to log 2: the metric is not complete (the circle lies at finite distance, or the "
                "blow-up rate is wrong); a complete hyperbolic metric has e^u ~ 2/(1 - |z|^2)",
                {"rate": -k, "defects": [float(np.median(d)) for d in ds]}, "boundary", _replay(metric, seed, points, "boundary")))
        elif failed:
            L = float(np.median(lim))
            findings.append(Finding(
                "boundary-scale", f"u + log(1 - |z|^2) tends to log 2 + {L:.6g}: e^u (1 - |z|^2)/2 -> {math.exp(L):.6g}, not 1",
                {"limit": L}, "boundary", _replay(metric, seed, points, "boundary")))
    return Report(metric.name, metric.source, seed, points, "autodiff", results, findings, diagnoses,
                  time.perf_counter() - t0)
