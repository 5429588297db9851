"""Checking a user's own infinitesimal coadjoint action on a Fourier-truncated algebra.

Shared by :mod:`hamcheck.virasoro` (reference: the Gelfand–Fuchs cocycle) and
:mod:`hamcheck.loop_groups` (reference: ``c int <xi, eta'> dtheta``). The result
is a :class:`hamcheck.Report`: its results are the checks below (each with its
statement, so ``report.explain()`` states them), its findings the diagnoses
(``central-cocycle`` with the ratio to the reference, ``bracket-sign``,
``not-antisymmetric``), and its one diagnosis of trust the de-aliased band.

The user supplies, on real coefficient vectors of a truncated algebra,

* ``bracket(X, Y) -> Z``          (algebra vectors, shape (d,)),
* ``pairing(T, X) -> float``      (coadjoint vector T, shape (d',), with X),
* ``action(X, T) -> delta_X T``   (affine in T: a linear part plus a central part),
* ``modes``: the |wave number| of each algebra basis vector (and, if the
  coadjoint basis differs, ``coadjoint_modes``),
* ``reference(X, Y) -> float``: the reference cocycle to compare with,

and :func:`check_coadjoint_action` decides:

``action``
    ``[V_X, V_Y] = sign * V_[X,Y]`` for the fundamental fields ``V_X(T) =
    delta_X T`` with ``[V, W](T) = DW(V(T)) - DV(W(T))`` (the core's
    vector-field bracket). In the Virasoro conventions of
    :mod:`hamcheck.virasoro` (``[X, Y] = X'Y - XY'``, ``delta`` the
    derivative of the pullback ``Phi``) ``sign = +1``; for a left coadjoint
    action ``ad*`` with ``[V, W]`` as above ``sign = -1``.
``antisymmetric``
    ``<delta_X T, Y> = -<delta_Y T, X>`` (so the KKS form is well defined).
``central_constant``
    the central term ``C_T(X, Y) = sign <delta_X T, Y> - <T, [X, Y]>`` does not
    depend on T. With ``omega(delta_X T, delta_Y T) = sign <delta_X T, Y>`` (the
    KKS form in both conventions) this is ``omega = <T, [X, Y]> + C(X, Y)``:
    ``C = c GF`` for Virasoro (sign +1) and ``C = c int <xi, eta'>`` for the
    loop group's left action ``delta_xi A = [xi, A] + c xi'`` (sign -1).
``cocycle_identity``
    ``C([X, Y], Z) + C([Y, Z], X) + C([Z, X], Y) = 0``.
``coboundary`` (a decision, always "pass" when it could be made)
    least squares ``C(e_a, e_b) = lambda([e_a, e_b])`` over the de-aliased
    pairs; a small misfit means C is a coboundary (shift T by lambda); otherwise
    a ``central-cocycle`` finding reports the ratio r in
    ``C = r * reference + lambda([., .])`` (so ``c/12`` vs ``c/2`` shows up as
    r = 1/6).
``central_ratio``
    fails when the central term is not a coboundary and r is not 1 (or C is
    not a multiple of the reference modulo coboundaries); skipped for a
    coboundary.

De-aliased bands (K = largest mode): products of truncated series are exact
only while the wave numbers add up to at most K. So T, X, Y have modes
``<= K//3`` in the action check, ``<= K//2`` in the antisymmetry and
T-independence checks; the central term is read at T = 0 for all pairs, and
the cocycle identity and coboundary fit use only pairs with ``m + n <= K``.

Example
-------
>>> from hamcheck import virasoro, cocycles
>>> alg = virasoro.truncated_algebra(8, c=2.0)
>>> rep = cocycles.check_coadjoint_action(alg.bracket, alg.pairing, alg.action, alg.modes,
...                                       reference=alg.reference)
>>> rep.passed, round(cocycles.central_ratio(rep), 10)
(True, 1.0)
"""

from __future__ import annotations

from types import MappingProxyType

import numpy as np

from ..errors import UsageError
from ..numerics import TINY
from ..report import CheckResult, Finding, Report
from .tolerances import TOLERANCES

__all__ = ["check_coadjoint_action", "central_ratio", "is_coboundary", "COCYCLE_TOLERANCES"]

#: The cocycle tolerances of ``circle.TOLERANCES`` under their former names (read-only; kept for one release).
COCYCLE_TOLERANCES = MappingProxyType({
    "action": TOLERANCES.cocycle_action,
    "antisymmetric": TOLERANCES.cocycle_antisymmetric,
    "central_constant": TOLERANCES.cocycle_central_constant,
    "cocycle_identity": TOLERANCES.cocycle_identity,
    "coboundary": TOLERANCES.cocycle_coboundary,
    "ratio": TOLERANCES.cocycle_ratio,
})

_STATEMENTS = {
    "action": "[V_X, V_Y] = sign V_[X,Y] for V_X(T) = delta_X T (a Lie algebra action with the declared sign)",
    "antisymmetric": "<delta_X T, Y> = -<delta_Y T, X> (the KKS form is well defined)",
    "central_constant": "sign <delta_X T, Y> - <T, [X, Y]> does not depend on T",
    "cocycle_identity": "C([X,Y],Z) + C([Y,Z],X) + C([Z,X],Y) = 0",
    "coboundary": "is C(X, Y) = lambda([X, Y]) for some linear lambda? (least squares over de-aliased pairs)",
    "central_ratio": "C = 1 x reference modulo coboundaries when C is not a coboundary",
}


def central_ratio(report: Report):
    """The ratio of the central term to the reference (None for a coboundary or no multiple of it)."""
    found = [f for f in report.findings if f.kind == "central-cocycle"]
    return found[0].data.get("ratio") if found else None


def is_coboundary(report: Report) -> bool:
    """True when the central term of a :func:`check_coadjoint_action` report is a coboundary."""
    return report.results["central_ratio"].status == "skip"


def _call(fn, label, *args):
    try:
        return np.asarray(fn(*[np.asarray(a) for a in args]))
    except Exception as exc:
        raise UsageError(f"{label} raised {type(exc).__name__}: {exc}") from None


def _vec(fn, label, shape, *args):
    out = _call(fn, label, *args)
    if out.shape != shape:
        raise UsageError(f"{label} returned shape {out.shape}; expected {shape}")
    if np.iscomplexobj(out):
        if np.any(np.abs(out.imag) > TOLERANCES.real_values * max(np.abs(out).max(), 1.0)):
            raise UsageError(f"{label} returned complex values; expected real coefficient vectors")
        out = out.real
    return out.astype(float)


def _scalar(fn, label, *args):
    out = _call(fn, label, *args)
    if out.size != 1:
        raise UsageError(f"{label} returned shape {out.shape}; expected a scalar")
    return float(np.real(out.reshape(())))


def _random_in_band(rng, modes, band, n):
    v = rng.standard_normal((n, modes.size))
    # decaying amplitudes keep all modes visible while mimicking smooth data
    v *= (1.0 + modes[None, :]) ** -1.0
    v[:, modes > band] = 0.0
    return v


def _checked(name, status, residual, tol, message, points, replay):
    return CheckResult(name, status, None if residual is None else float(residual), tol, None, message, points,
                       statement=_STATEMENTS[name], replay=replay)


def _result(name, residual, tol, message_ok, message_fail, points, replay):
    failed = not (residual <= tol)
    return _checked(name, "fail" if failed else "pass", residual, tol, message_fail if failed else message_ok, points, replay)


def check_coadjoint_action(
    bracket,
    pairing,
    action,
    modes,
    *,
    reference,
    reference_name: str = "the reference cocycle",
    sign: int = +1,
    coadjoint_modes=None,
    samples: int = 4,
    seed: int = 0,
    name: str = "coadjoint action",
    replay: str | None = None,
) -> Report:
    """Check a user's truncated coadjoint action; extract and classify its central term.

    See the module docstring for the checks, the bands and the conventions.
    ``reference(X, Y)`` is the cocycle the central term is compared with
    (e.g. ``c * GF`` for Virasoro, ``c int <xi, eta'>`` for loop groups).
    ``name`` names the report; ``replay`` is the call that reproduces it
    (default: this function's call with ``samples`` and ``seed``).
    """
    if replay is None:
        replay = f"hamcheck.circle.check_coadjoint_action(..., sign={sign:+d}, samples={samples}, seed={seed})"
    if sign not in (1, -1):
        raise UsageError(f"sign must be +1 or -1; got {sign!r}")
    modes = np.asarray(modes)
    if modes.ndim != 1 or modes.size < 3 or np.any(modes < 0) or not np.all(np.equal(np.mod(modes, 1), 0)):
        raise UsageError(f"modes must list a non-negative integer wave number per basis vector (>= 3 of them); got {modes!r}")
    modes = modes.astype(int)
    cmodes = modes if coadjoint_modes is None else np.asarray(coadjoint_modes).astype(int)
    d, dc = modes.size, cmodes.size
    K = int(max(modes.max(), cmodes.max()))
    if K < 3:
        raise UsageError(f"the truncation needs modes up to at least 3 to have a de-aliased band; got K = {K}")
    third, half = K // 3, K // 2
    rng = np.random.default_rng(seed)
    I = np.eye(d)
    zero_T = np.zeros(dc)

    # ------------------------------------------------ brackets of the basis
    B = np.stack([np.stack([_vec(bracket, "bracket(X, Y)", (d,), I[a], I[b]) for b in range(d)]) for a in range(d)])
    # central term at T = 0, full basis: sign <delta_{e_a} 0, e_b>
    D0 = np.stack([_vec(action, "action(X, T)", (dc,), I[a], zero_T) for a in range(d)])
    P = np.stack([np.array([_scalar(pairing, "pairing(T, X)", cv, I[b]) for b in range(d)]) for cv in np.eye(dc)])
    # P[i, b] = <f_i, e_b>: pairing of coadjoint basis i with algebra basis b (pairing is bilinear)
    C0 = sign * (D0 @ P)
    R = np.array([[_scalar(reference, "reference(X, Y)", I[a], I[b]) for b in range(d)] for a in range(d)])

    def lin(X, U):
        return _vec(action, "action(X, T)", (dc,), X, U) - _vec(action, "action(X, T)", (dc,), X, zero_T)

    results, findings = {}, []

    # ------------------------------------------------------------ action
    num = numf = den = 0.0
    Ts = _random_in_band(rng, cmodes, third, samples)
    Xs = _random_in_band(rng, modes, third, samples)
    Ys = _random_in_band(rng, modes, third, samples)
    for T, X, Y in zip(Ts, Xs, Ys):
        dX = _vec(action, "action(X, T)", (dc,), X, T)
        dY = _vec(action, "action(X, T)", (dc,), Y, T)
        t1, t2 = lin(Y, dX), lin(X, dY)
        br = np.einsum("a,b,abc->c", X, Y, B)
        rhs = _vec(action, "action(X, T)", (dc,), br, T)
        lhs = t1 - t2
        num = max(num, np.abs(lhs - sign * rhs).max())
        numf = max(numf, np.abs(lhs + sign * rhs).max())
        den = max(den, (np.abs(t1) + np.abs(t2) + np.abs(rhs)).max())
    r_act, r_flip = num / max(den, TINY), numf / max(den, TINY)
    tol = TOLERANCES.cocycle_action
    results["action"] = _result(
        "action", r_act, tol, f"holds with sign {sign:+d} at {samples} samples", "the action property fails", samples, replay
    )
    if r_act > tol and r_flip <= tol:
        findings.append(
            Finding(
                "bracket-sign",
                f"delta is an action for the opposite sign: [V_X, V_Y] = {-sign:+d} V_[X,Y] (residual "
                f"{r_flip:.1e}; declared sign {sign:+d} gives {r_act:.1e}). Fix: the bracket has the opposite "
                "sign convention (X'Y - XY' versus XY' - X'Y): negate the bracket or declare "
                f"sign={-sign:+d}",
                {"residual": r_act, "flipped_residual": r_flip},
                "action",
                replay,
            )
        )

    # ----------------------------------------------------- antisymmetry
    sel = modes <= half
    Ts = _random_in_band(rng, cmodes, half, samples)
    num = den = 0.0
    spread = spread_den = 0.0
    for T in Ts:
        G = np.stack([_vec(action, "action(X, T)", (dc,), I[a], T) for a in range(d)]) @ P
        Gs = G[np.ix_(sel, sel)]
        num = max(num, np.abs(Gs + Gs.T).max())
        den = max(den, (np.abs(Gs) + np.abs(Gs.T)).max())
        TB = np.einsum("i,ib,acb->ac", T, P, B)  # <T, [e_a, e_c]>
        CT = sign * G - TB
        diff = (CT - C0)[np.ix_(sel, sel)]
        spread = max(spread, np.abs(diff).max())
        spread_den = max(spread_den, (np.abs(G) + np.abs(TB) + np.abs(C0))[np.ix_(sel, sel)].max())
    r_anti = num / max(den, TINY)
    not_anti = "<delta_X T, Y> is not antisymmetric: the pairing, the action or their normalisations do not match"
    results["antisymmetric"] = _result("antisymmetric", r_anti, TOLERANCES.cocycle_antisymmetric, "holds", not_anti, samples, replay)
    if r_anti > TOLERANCES.cocycle_antisymmetric:
        findings.append(
            Finding(
                "not-antisymmetric",
                f"<delta_X T, Y> + <delta_Y T, X> is {r_anti:.1e} of its terms: the KKS form "
                "omega(delta_X T, delta_Y T) = <delta_X T, Y> is not well defined. Fix: check the factor 2 in "
                "2 X' T (weight of a quadratic differential) and the pairing",
                {"residual": r_anti},
                "antisymmetric",
                replay,
            )
        )
    r_spread = spread / max(spread_den, TINY)
    depends = (f"({sign:+d})<delta_X T, Y> - <T, [X, Y]> depends on T: the linear part of delta is not the coadjoint "
               "action of this bracket")
    results["central_constant"] = _result("central_constant", r_spread, TOLERANCES.cocycle_central_constant,
                                          "the central term does not depend on T", depends, samples, replay)

    # ----------------------------------------------------- cocycle identity
    exact = (modes[:, None] + modes[None, :]) <= K
    BC = np.einsum("abc,cz->abz", B, C0)
    J = BC + BC.transpose(1, 2, 0) + BC.transpose(2, 0, 1)
    BCa = np.einsum("abc,cz->abz", np.abs(B), np.abs(C0))
    Ja = BCa + BCa.transpose(1, 2, 0) + BCa.transpose(2, 0, 1)
    trip = exact[:, :, None] & exact[None, :, :] & exact.T[:, None, :]
    r_coc = np.abs(J[trip]).max() / max(Ja[trip].max(), TINY) if trip.any() else 0.0
    results["cocycle_identity"] = _result(
        "cocycle_identity",
        r_coc,
        TOLERANCES.cocycle_identity,
        "the central term is a 2-cocycle",
        "the central term violates the 2-cocycle identity",
        int(trip.sum()),
        replay,
    )

    # ------------------------------------------------------- coboundary fit
    rows = np.argwhere(exact)
    A = B[rows[:, 0], rows[:, 1], :]
    y = C0[rows[:, 0], rows[:, 1]]
    ref = R[rows[:, 0], rows[:, 1]]
    ynorm = max(np.linalg.norm(y), TINY)
    lam, *_ = np.linalg.lstsq(A, y, rcond=None)
    cob_misfit = float(np.linalg.norm(A @ lam - y) / ynorm)
    is_cob = cob_misfit <= TOLERANCES.cocycle_coboundary or np.linalg.norm(y) <= TINY
    ratio = None
    joint_misfit = None
    if not is_cob:
        AJ = np.concatenate([ref[:, None], A], axis=1)
        sol, *_ = np.linalg.lstsq(AJ, y, rcond=None)
        joint_misfit = float(np.linalg.norm(AJ @ sol - y) / ynorm)
        ref_is_cob = np.linalg.norm(A @ np.linalg.lstsq(A, ref, rcond=None)[0] - ref) <= (
            TOLERANCES.cocycle_coboundary * max(np.linalg.norm(ref), TINY)
        )
        if joint_misfit <= TOLERANCES.cocycle_coboundary and not ref_is_cob:
            ratio = float(sol[0])
            lam = sol[1:]
    band = (
        f"K = {K}: action check on modes <= {third}, antisymmetry and T-independence on modes <= {half}, "
        f"cocycle identity and coboundary fit on pairs with m + n <= {K} ({rows.shape[0]} pairs)"
    )
    if is_cob:
        msg = f"the central term is a coboundary (misfit {cob_misfit:.1e}): lambda([X, Y]) with lambda shown"
    elif ratio is not None:
        msg = f"not a coboundary (misfit {cob_misfit:.1e}); ratio to {reference_name} = {ratio:.10g}"
    else:
        msg = (
            f"not a coboundary (misfit {cob_misfit:.1e}) and not a multiple of {reference_name} modulo "
            f"coboundaries (misfit {joint_misfit:.1e})"
        )
    pairs = int(rows.shape[0])
    results["coboundary"] = _checked("coboundary", "pass", cob_misfit, TOLERANCES.cocycle_coboundary, msg, pairs, replay)
    if is_cob:
        ratio_status, dev, ratio_msg, pairs = "skip", None, "the central term is a coboundary", 0
    elif ratio is None:
        ratio_status, dev, ratio_msg = "fail", None, f"not a multiple of {reference_name}"
    else:
        dev = abs(ratio - 1.0)
        ratio_status = "pass" if dev <= TOLERANCES.cocycle_ratio else "fail"
        ratio_msg = f"ratio to {reference_name} = {ratio:.10g}"
    results["central_ratio"] = _checked("central_ratio", ratio_status, dev, TOLERANCES.cocycle_ratio, ratio_msg, pairs, replay)
    if not is_cob:
        if ratio is not None:
            off = abs(ratio - 1.0) > TOLERANCES.cocycle_ratio
            advice = (
                f" It differs from 1: the normalisation of the central term is off by the factor {ratio:.6g} "
                "(e.g. 1/6 when c/12 X''' is used where c/2 X''' is meant; 2 when c GF is doubled); rescale "
                "the central part of delta or restate c"
                if off
                else " It matches the reference."
            )
            text = (
                f"the central term ({sign:+d})<delta_X T, Y> - <T, [X, Y]> is a non-trivial 2-cocycle equal to "
                f"{ratio:.10g} x {reference_name} modulo coboundaries.{advice}"
            )
        else:
            text = (
                f"the central term is not a coboundary and not a multiple of {reference_name} modulo "
                f"coboundaries (misfit {joint_misfit:.1e}); compare it with the reference mode by mode"
            )
        findings.append(
            Finding(
                "central-cocycle",
                text,
                {"ratio": ratio, "coboundary_misfit": cob_misfit, "joint_misfit": joint_misfit, "lambda": lam, "matrix": C0},
                # the finding explains the failing ratio check when there is one
                "central_ratio" if results["central_ratio"].status == "fail" else "coboundary",
                replay,
            )
        )
    trust = Finding("de-aliased-band", f"de-aliased band: {band}", {"K": K}, "", replay)
    return Report(model=name, source=None, seed=seed, points=samples, derivatives="none (linear algebra on mode vectors)",
                  results=results, findings=tuple(findings), diagnoses=(trust,))
