"""Products of spheres with the diagonal SO(3): reduced at 0 they are polygon spaces.

Sphere i is the SO(3) coadjoint orbit of radius r_i (KKS form, volume 4 pi r_i;
docs/references.md row F2b), in Archimedes' cylindrical coordinates
(phi_i, z_i) in (-pi, pi) x (-r_i, r_i): p_i = (s cos phi_i, s sin phi_i, z_i)
with s = sqrt(r_i^2 - z_i^2). The chart misses only a meridian and the poles
(measure zero), and the form is Darboux there: omega = sum_i dphi_i ^ dz_i
(iota of the rotation field d/dphi_i gives dz_i, the third moment component).
SO(3) rotates every sphere, X_xi(p_i) = xi x p_i; the moment map is
mu = sum_i p_i. The level set mu = 0 is the closed polygons with side lengths
r_i, and mu^{-1}(0)/SO(3) is the polygon space of Kapovich and Millson
(docs/references.md row F7b): ``hamcheck.reduce(build(r), [0, 0, 0])``.

The poles, the fixed points of the rotations about the third axis, lie on the
edge of that chart, so the atlas has a second chart holding all 2^n of them:
on each sphere the stereographic projection from the equatorial point
(r_i, 0, 0), w -> p = r_i (|w|^2 - 1, 2 w_1, 2 w_2) / (|w|^2 + 1), whose KKS form
<p, d_1 p x d_2 p> / r_i^2 is computed from p by autodiff. The fixed points of
the rotations about the second and third axes lie in it, a quarter turn from
the projection point, so the fixed-point search, started from area-uniform
points, reaches each of them equally often. Both charts embed the space by
the n points p_i.

Example
-------
>>> quad = build([1.0, 1.4, 0.8, 1.1])
>>> hamcheck.reduce(quad, [0.0, 0.0, 0.0]).volume       # doctest: +SKIP
9.42477...                                               # 3 pi
"""

import math

import jax
import jax.numpy as jnp
import numpy as np

import hamcheck

SO3 = hamcheck.LieAlgebra.from_matrices(
    [
        np.array([[0.0, 0.0, 0.0], [0.0, 0.0, -1.0], [0.0, 1.0, 0.0]]),
        np.array([[0.0, 0.0, 1.0], [0.0, 0.0, 0.0], [-1.0, 0.0, 0.0]]),
        np.array([[0.0, -1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, 0.0]]),
    ],
    names=["L1", "L2", "L3"],
)

_DARBOUX = np.array([[0.0, 1.0], [-1.0, 0.0]])  # coordinates (phi, z): omega = dphi ^ dz


def _stereographic(r, n, algebra, rot, name):
    """The chart of every factor's stereographic projection from (r_i, 0, 0): it holds all the poles."""

    def points(w):
        u = w.reshape(n, 2)
        q = jnp.sum(u ** 2, axis=1)
        return jnp.asarray(r)[:, None] * jnp.stack([q - 1, 2 * u[:, 0], 2 * u[:, 1]], axis=1) / (q + 1)[:, None]

    def form(w):
        u = w.reshape(n, 2)

        def block(ui, ri):
            p = lambda v: ri * jnp.stack([v @ v - 1, 2 * v[0], 2 * v[1]]) / (v @ v + 1)  # noqa: E731
            J = jax.jacfwd(p)(ui)
            a = jnp.dot(p(ui), jnp.cross(J[:, 0], J[:, 1])) / ri ** 2
            return jnp.array([[0.0, 1.0], [-1.0, 0.0]]) * a

        blocks = jax.vmap(block)(u, jnp.asarray(r))
        out = jnp.zeros((2 * n, 2 * n))
        for i in range(n):
            out = out.at[2 * i:2 * i + 2, 2 * i:2 * i + 2].set(blocks[i])
        return out

    def action(g, w):
        q = points(w) @ rot(g).T
        d = jnp.asarray(r) - q[:, 0]
        return jnp.stack([q[:, 1] / d, q[:, 2] / d], axis=1).reshape(-1)

    def sample(rng):
        # area-uniform on every sphere, so each of the 2^n products of basins of the fixed-point search
        # (one hemisphere per factor) is reached equally often
        v = rng.standard_normal((n, 3))
        q = v / np.linalg.norm(v, axis=1, keepdims=True)
        return (q[:, 1:] / (1 - q[:, :1])).reshape(-1)

    return hamcheck.Model(
        name + " (stereographic)", 2 * n, form=form, algebra=algebra,
        moment=lambda w: jnp.sum(points(w), axis=0), action=action,
        sample=sample,
        embedding=lambda w: points(w).reshape(-1),
        chart_labels=[f"{c}{i + 1}" for i in range(n) for c in ("u", "v")],
    )


def build(radii, name=None, algebra=SO3, represent=None):
    """The product of spheres of the given radii with the diagonal rotation action.

    ``algebra`` and ``represent`` (a function taking a group element of
    ``algebra`` to its 3 x 3 rotation) let the same space be declared with
    another group acting through SO(3), e.g. SU(2) by the adjoint action.
    """
    r = np.asarray(radii, dtype=float)
    if r.ndim != 1 or r.size < 2 or not np.all(r > 0):
        raise hamcheck.ModelError(f"radii must be two or more positive side lengths; got {radii!r}")
    n = r.size
    rot = represent if represent is not None else (lambda g: g)

    def points(x):
        phi, z = x[0::2], x[1::2]
        s = jnp.sqrt(jnp.asarray(r) ** 2 - z ** 2)
        return jnp.stack([s * jnp.cos(phi), s * jnp.sin(phi), z], axis=1)  # (n, 3)

    def moment(x):
        return jnp.sum(points(x), axis=0)

    def action(g, x):
        q = points(x) @ rot(g).T
        return jnp.stack([jnp.arctan2(q[:, 1], q[:, 0]), q[:, 2]], axis=1).reshape(-1)

    def sample(rng):
        # Liouville-uniform (Archimedes) away from the seam phi = +-pi and the poles: the flow check
        # follows orbits for |t xi| = 0.05, which must not cross the seam, where the chart jumps by 2 pi
        # (near a pole phi turns fast). Integrals use the whole declared domain, not these samples.
        return np.stack([rng.uniform(-0.9 * math.pi, 0.9 * math.pi, n), rng.uniform(-0.9 * r, 0.9 * r)],
                        axis=1).reshape(-1)

    omega = np.kron(np.eye(n), _DARBOUX)
    domain = [b for ri in r for b in ((-math.pi, math.pi), (-ri, ri))]
    labels = [f"{c}{i + 1}" for i in range(n) for c in ("phi", "z")]
    name = name or "polygons(" + ", ".join(f"{v:g}" for v in r) + ")"
    return hamcheck.Model(
        name,
        2 * n,
        form=lambda x: jnp.asarray(omega),
        algebra=algebra,
        moment=moment,
        action=action,
        sample=sample,
        domain=domain,
        chart_labels=labels,
        embedding=lambda x: points(x).reshape(-1),
        charts=(_stereographic(r, n, algebra, rot, name),),
    )


# the quadrilateral space of side lengths (1, 1.4, 0.8, 1.1): a sphere of volume 3 pi (docs/references.md row F7b)
quadrilateral = build([1.0, 1.4, 0.8, 1.1], name="quadrilateral")
