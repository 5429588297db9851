"""The unit sphere with SO(3) by rotations, in a stereographic chart.

Chart: projection from the south pole, p(x) = (2x_1, 2x_2, 1 - |x|^2) / (1 + |x|^2),
which keeps the orientation of the outward normal, so the area form is
omega = 4 dx_1 ^ dx_2 / (1 + |x|^2)^2. Vector fields X_xi(p) = xi x p, moment map
mu(p) = p (docs/references.md F2).

The south pole lies at infinity of that chart, so the bundled model declares a
second chart, the projection from the north pole, y = (p_1, -p_2) / (1 - p_3),
with its form <p, d_1 p x d_2 p> computed from p by autodiff; both embed the
sphere by p itself. Then both fixed points of every rotation are found.
"""

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


def to_sphere(x):
    r2 = x @ x
    return jnp.array([2 * x[0], 2 * x[1], 1 - r2]) / (1 + r2)


def to_chart(p):
    return jnp.array([p[0], p[1]]) / (1 + p[2])


def area_form(x):
    return 4 / (1 + x @ x) ** 2 * jnp.array([[0.0, 1.0], [-1.0, 0.0]])


def rotate(g, x):
    return to_chart(g @ to_sphere(x))


def build(name="sphere", form=area_form, moment=to_sphere, action=rotate, **kw):
    return hamcheck.Model(name, 2, form=form, algebra=SO3, moment=moment, action=action, **kw)


def from_north(y):
    r2 = y @ y
    return jnp.array([2 * y[0], -2 * y[1], r2 - 1]) / (1 + r2)


def _north_chart():
    def form(y):
        J = jax.jacfwd(from_north)(y)
        return jnp.dot(from_north(y), jnp.cross(J[:, 0], J[:, 1])) * jnp.array([[0.0, 1.0], [-1.0, 0.0]])

    def action(g, y):
        q = g @ from_north(y)
        return jnp.array([q[0], -q[1]]) / (1 - q[2])

    return hamcheck.Model("sphere (north chart)", 2, form=form, algebra=SO3, moment=from_north, action=action,
                          embedding=from_north)


sphere = build(embedding=to_sphere, charts=(_north_chart(),))
