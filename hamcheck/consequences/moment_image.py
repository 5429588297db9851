"""Convexity (Atiyah, Guillemin-Sternberg) and the Duistermaat-Heckman density.

For a torus ``T`` (commuting basis elements) the image of the moment map is
sampled with Liouville weights (scrambled Sobol points through the chart's
domain, :func:`~hamcheck.consequences.integration.weighted_samples`), compared
with the convex hull of the images of the fixed points (``scipy.spatial``;
found in every chart of the atlas, and refused in one line when they fail the
identities of a compact space: fixed points missing from the chart),
and the DH density of ``<mu, xi>`` for a generic ``xi`` in ``t`` is compared,
as a weighted histogram, with the piecewise polynomial predicted by the
fixed points: ``f(a) = (2 pi)^n sum_p (<mu(p), xi> - a)_+^(n-1) / ((n-1)! prod_k w_k(p))``.

Example
-------
>>> img = hamcheck.moment_image(cp2, ["t1", "t2"])      # doctest: +SKIP
>>> img.inside_fraction, img.fill, img.dh_error         # doctest: +SKIP
>>> img.plot("cp2.png")                                 # doctest: +SKIP
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import ModelError, UsageError
from ._common import require_model
from ._torus import generic_element, torus_basis
from .fixed_points import FixedPoints, fixed_points
from .integration import weighted_samples

__all__ = ["MomentImage", "moment_image", "dh_density"]

#: A sampled image point is inside the hull when no facet inequality is
#: violated by more than this times the hull's diameter (round-off: 1e-15).
HULL_RTOL = 1e-9
#: Sampled-hull volume over fixed-point-hull volume above which the image
#: counts as filling the hull (Sobol samples reach ~0.95+ of a simplex).
FILL_THRESHOLD = 0.9
#: Histogram bins of the DH density.
DH_BINS = 24


def dh_density(fps: FixedPoints, n: int, a):
    """Predicted DH density of ``<mu, xi>`` at ``a`` from the fixed points (isolated, ``n >= 1``)."""
    a = np.asarray(a, dtype=float)
    f = np.zeros_like(a)
    for p in fps:
        c = (2 * math.pi) ** n / math.prod(p.hessian_weights)
        f += c * np.maximum(p.value - a, 0.0) ** (n - 1) * (p.value > a) / math.factorial(n - 1)
    return f


def _dh_bin_means(fps, n, edges):
    F = np.zeros_like(edges)
    for p in fps:
        c = (2 * math.pi) ** n / math.prod(p.hessian_weights)
        F += -c * np.maximum(p.value - edges, 0.0) ** n / math.factorial(n)
    return np.diff(F) / np.diff(edges)


@dataclass(frozen=True, eq=False)
class MomentImage:
    """Sampled image, hull of fixed-point images, convexity verdict and DH histogram."""

    model: str
    torus: tuple
    image: np.ndarray
    weights: np.ndarray
    fixed_images: np.ndarray
    inside_fraction: float
    fill: float
    convex: bool
    xi: np.ndarray
    dh_edges: np.ndarray
    dh_histogram: np.ndarray
    dh_predicted: np.ndarray
    dh_error: float
    fixed_points: FixedPoints
    note: str = ""

    def __repr__(self) -> str:
        note = f"; {self.note}" if self.note else ""
        return (
            f"MomentImage({self.model!r}, torus={list(self.torus)}: {len(self.fixed_images)} fixed-point images, "
            f"inside={self.inside_fraction:.4f}, fill={self.fill:.3f}, convex={self.convex}, "
            f"DH density error={self.dh_error:.1e}{note})"
        )

    def plot(self, path) -> str:
        """Write a PNG: the image with the hull and fixed points, and the DH histogram vs prediction."""
        try:
            import matplotlib

            matplotlib.use("Agg")
            import matplotlib.pyplot as plt
        except ImportError:
            raise UsageError(
                "MomentImage.plot needs matplotlib, an optional extra: pip install 'hamcheck[plots]'"
            ) from None
        fig, (ax, bx) = plt.subplots(1, 2, figsize=(10, 4.5))
        img, fix = self.image, self.fixed_images
        rng = np.random.default_rng(0)
        show = img[rng.choice(len(img), size=min(4000, len(img)), replace=False)]
        if img.shape[1] == 1:
            ax.scatter(show[:, 0], np.zeros(len(show)), s=2, alpha=0.3, label="sampled image")
            ax.scatter(fix[:, 0], np.zeros(len(fix)), s=60, c="red", marker="x", label="fixed points")
            ax.set_yticks([])
        else:
            ax.scatter(show[:, 0], show[:, 1], s=2, alpha=0.3, label="sampled image")
            if len(fix) >= 3:
                from scipy.spatial import ConvexHull

                try:
                    h = ConvexHull(fix[:, :2])
                    loop = np.append(h.vertices, h.vertices[0])
                    ax.plot(fix[loop, 0], fix[loop, 1], "k-", lw=1, label="hull of fixed-point images")
                except Exception:
                    pass
            ax.scatter(fix[:, 0], fix[:, 1], s=60, c="red", marker="x", label="fixed points", zorder=3)
            ax.set_ylabel(f"<mu, {self.torus[1]}>")
        ax.set_xlabel(f"<mu, {self.torus[0]}>")
        ax.set_title(f"{self.model}: moment image (inside {self.inside_fraction:.3f}, fill {self.fill:.2f})")
        ax.legend(fontsize=8)
        mids = 0.5 * (self.dh_edges[1:] + self.dh_edges[:-1])
        bx.bar(mids, self.dh_histogram, width=np.diff(self.dh_edges), alpha=0.5, label="sampled (Liouville)")
        bx.plot(mids, self.dh_predicted, "r.-", label="fixed-point prediction")
        bx.set_xlabel("<mu, xi> for generic xi")
        bx.set_ylabel("DH density")
        bx.set_title(f"Duistermaat-Heckman density (max rel. error {self.dh_error:.1e})")
        bx.legend(fontsize=8)
        fig.tight_layout()
        fig.savefig(path, dpi=100)
        plt.close(fig)
        return str(path)


def torus_fixed_points(model, B, who, starts, seed):
    """The fixed points of the torus spanned by the rows of ``B`` (via a generic element), all of them or an error.

    Raises :class:`~hamcheck.ModelError` in one line when the fixed points found
    fail the identities of a compact space (fixed points missing from the
    chart, probably at infinity) and :class:`~hamcheck.UsageError` when they are
    not isolated.
    """
    xi = generic_element(B)
    fps = fixed_points(model, xi, starts=starts, seed=seed)
    if len(fps) and not fps.isolated:
        raise UsageError(
            f"{who}: the torus has fixed points in {model.name!r} that are not isolated; it needs isolated fixed points"
        )
    if fps.completeness.complete is False:
        raise ModelError(f"{who}({model.name!r}) needs every fixed point: {fps.completeness.note}")
    return xi, fps


def affine_rank(P) -> int:
    """Dimension of the affine span of the rows of ``P`` (relative rank cut :data:`HULL_RTOL`)."""
    P = np.asarray(P, dtype=float)
    if len(P) < 2:
        return 0
    D = P[1:] - P[0]
    sv = np.linalg.svd(D, compute_uv=False)
    return int(np.sum(sv > HULL_RTOL * max(float(sv[0]), 1e-300)))


def hull_of_fixed_images(fix, who, model_name):
    """``scipy.spatial.ConvexHull`` of the fixed-point images, or one line on why there is no full-dimensional hull."""
    from scipy.spatial import ConvexHull

    m = fix.shape[1]
    r = affine_rank(fix)
    message = (
        f"{who}({model_name!r}): the moment image found from the fixed points is degenerate ({len(fix)} points "
        f"spanning {r} of the {m} dimensions of t*); declare the charts holding the other fixed points "
        "(Model(charts=..., embedding=...)), or give torus elements that act effectively"
    )
    if r < m:
        raise ModelError(message)
    try:
        return ConvexHull(fix)
    except Exception as exc:  # qhull's own errors (precision, flat input): say what it means here
        raise ModelError(f"{message} [qhull: {str(exc).strip().splitlines()[0]}]") from None


def moment_image(model, torus, *, samples: int = 2**14, starts: int = 64, seed: int = 0) -> MomentImage:
    """The image of the torus moment map vs the hull of the fixed-point images, and the DH density.

    The fixed points come from every chart of the atlas and must be complete
    (see :class:`~hamcheck.consequences.fixed_points.Completeness`); the image is
    sampled on the main chart.
    """
    from scipy.spatial import ConvexHull

    require_model(model, "moment_image")
    B = torus_basis(model, torus, "torus")
    m = B.shape[0]
    n = model.dim // 2
    xi, fps = torus_fixed_points(model, B, "moment_image", starts, seed)
    note = "" if fps.completeness.complete else "fixed points " + fps.completeness.note
    _, w, mu = weighted_samples(model, samples, seed)
    image = mu @ B.T
    fix = np.array([p.moment for p in fps]) @ B.T
    diam = max(float(np.max(np.ptp(fix, axis=0))), 1e-300)
    if m == 1:
        lo, hi = fix.min(), fix.max()
        inside = np.mean((image[:, 0] >= lo - HULL_RTOL * diam) & (image[:, 0] <= hi + HULL_RTOL * diam))
        fill = float(np.ptp(image[:, 0]) / diam)
    else:
        hull = hull_of_fixed_images(fix, "moment_image", model.name)
        viol = image @ hull.equations[:, :-1].T + hull.equations[:, -1]
        inside = np.mean(np.max(viol, axis=1) <= HULL_RTOL * diam)
        try:
            fill = float(ConvexHull(image).volume / hull.volume)
        except Exception:  # the sampled image is flat: it fills none of the hull
            fill = 0.0
    values = mu @ xi
    lo, hi = min(p.value for p in fps), max(p.value for p in fps)
    if not hi > lo:
        raise ModelError(
            f"moment_image({model.name!r}): every fixed point has <mu, xi> = {lo:.6g} for the generic xi, so the DH "
            "density has no range; declare the charts holding the other fixed points"
        )
    edges = np.linspace(lo, hi, DH_BINS + 1)
    hist, _ = np.histogram(values, bins=edges, weights=w)
    hist = hist / np.diff(edges)
    pred = _dh_bin_means(fps, n, edges)
    err = float(np.max(np.abs(hist - pred)) / max(np.max(np.abs(pred)), 1e-300))
    convex = bool(inside >= 1.0 and fill >= FILL_THRESHOLD)
    return MomentImage(
        model.name, tuple(model.algebra.names[int(np.argmax(np.abs(b)))] if np.count_nonzero(b) == 1 else str(tuple(b)) for b in B),
        image, w, fix, float(inside), fill, convex, xi, edges, hist, pred, err, fps, note,
    )
