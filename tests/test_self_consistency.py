"""Self-consistency sweep: every builder hamcheck ships gives models that pass every check.

A model built by hamcheck is correct by construction, so any failure here is a
false alarm of a check (its own numerical error) or a builder sampling outside
the region where its chart is valid. Each model is checked at 32 points for
several seeds; its compiled program is built once (module-scoped cache) and
re-checking with another seed costs only the run.

Facts used: a coadjoint orbit's dimension is dim g - dim of the stabilizer, and
the orbit of a central element is a point (common practice); T0 = c/4 is the
Virasoro orbit of the sl(2)-invariant potential, so its chart starts at mode 2
(docs/references.md, Virasoro).
"""

import functools
import warnings

import jax.numpy as jnp
import numpy as np
import pytest

import hamcheck
from hamcheck import LieAlgebra, Model, loop_groups, virasoro

SEEDS = (0, 1, 2)
POINTS = 32

SO3 = [np.array([[0.0, 0, 0], [0, 0, -1], [0, 1, 0]]), np.array([[0.0, 0, 1], [0, 0, 0], [-1, 0, 0]]),
       np.array([[0.0, -1, 0], [1, 0, 0], [0, 0, 0]])]
PAULI = [np.array([[0, 1], [1, 0]]), np.array([[0, -1j], [1j, 0]]), np.diag([1.0, -1.0])]
SL2 = [np.diag([1.0, -1.0]), np.array([[0, 1.0], [0, 0]]), np.array([[0, 0], [1.0, 0]])]


def un(n):
    """u(n): the basis i E_kk, E_jk - E_kj, i (E_jk + E_kj)."""
    basis = [np.diag([1j if k == j else 0 for k in range(n)]) for j in range(n)]
    for j in range(n):
        for k in range(j + 1, n):
            E = np.zeros((n, n), complex)
            E[j, k], E[k, j] = 1, -1
            basis += [E, 1j * np.abs(E)]
    return LieAlgebra.from_matrices(basis)


def _coadjoint(algebra, point):
    return lambda: hamcheck.coadjoint_orbit(algebra(), point)


def _virasoro(T0, c, modes):
    def build():
        with warnings.catch_warnings():  # a restricted region warns; the sweep checks what is built
            warnings.simplefilter("ignore")
            return virasoro.orbit_model(T0, c, modes)

    return build


def _loops(a, c, modes):
    return lambda: loop_groups.orbit_model(a, c, modes)


BUILDERS = {
    # Virasoro orbit charts: below and at the sl(2) point, T0 < 0, several c, an indefinite slice (issue item 6)
    "virasoro-T0=0.1-c=1-[1,2]": _virasoro(0.1, 1.0, [1, 2]),
    "virasoro-sl2-[2..8]": _virasoro(0.25, 1.0, range(2, 9)),
    "virasoro-T0<0-[1,2,3]": _virasoro(-0.3, 1.0, [1, 2, 3]),
    "virasoro-T0=1-c=0.5-[1,2,3,4]": _virasoro(1.0, 0.5, [1, 2, 3, 4]),
    "virasoro-T0=0.6-c=2-[1,3]": _virasoro(0.6, 2.0, [1, 3]),
    "virasoro-T0=2-c=3-[2,5]": _virasoro(2.0, 3.0, [2, 5]),
    # loop-group orbit charts at several a/c and mode sets
    "loops-a=0.3-c=1-K1": _loops(0.3, 1.0, 1),
    "loops-a=1.7-c=1-[1,2]": _loops(1.7, 1.0, [1, 2]),
    "loops-a=-0.4-c=2-K2": _loops(-0.4, 2.0, 2),
    # coadjoint orbits, regular and singular points
    "so3": _coadjoint(lambda: LieAlgebra.from_matrices(SO3), [0.3, -0.5, 1.2]),
    "su2": _coadjoint(lambda: LieAlgebra.from_matrices([1j * s / 2 for s in PAULI]), [0.2, 0.1, 0.9]),
    "u2-regular": _coadjoint(lambda: un(2), [0.9, -0.4, 0.3, 0.2]),
    "u3-regular": _coadjoint(lambda: un(3), [0.7, -0.2, -1.1, 0, 0, 0, 0, 0, 0]),
    "u3-singular": _coadjoint(lambda: un(3), [0.5, 0.5, -1.0, 0, 0, 0, 0, 0, 0]),
    "sl2-elliptic": _coadjoint(lambda: LieAlgebra.from_matrices(SL2), [0.0, 1.0, -1.0]),
    "sl2-hyperbolic": _coadjoint(lambda: LieAlgebra.from_matrices(SL2), [1.0, 0.0, 0.0]),
    "sl2-nilpotent": _coadjoint(lambda: LieAlgebra.from_matrices(SL2), [0.0, 1.0, 0.0]),
}

@functools.cache
def built(case) -> Model:
    return BUILDERS[case]()


def _params():
    for case in BUILDERS:
        for seed in SEEDS:
            yield pytest.param(case, seed, id=f"{case}-seed{seed}")


@pytest.mark.slow
@pytest.mark.parametrize("case, seed", list(_params()))
def test_every_built_model_passes_every_check(case, seed):
    report = hamcheck.check(built(case), points=POINTS, seed=seed)
    failed = [r.name for r in report.results.values() if r.status not in ("pass", "skip")]
    assert not failed, str(report)
    assert report.passed, str(report)


def test_degenerate_point_search_stays_in_the_sampled_region():
    # the form (1 - |x|^2 / 1.2^2) dx^dy degenerates on the circle of radius 1.2; points are sampled in
    # the unit disc, whose bounding box reaches radius sqrt(2): the search must not report the circle
    J = jnp.array([[0.0, 1.0], [-1.0, 0.0]])

    def sample(rng):
        r, t = np.sqrt(rng.uniform()), rng.uniform(0, 2 * np.pi)
        return np.array([r * np.cos(t), r * np.sin(t)])

    def disc(limit):
        return Model(f"disc, form degenerate at radius {limit}", 2, form=lambda x: (1 - (x @ x) / limit**2) * J,
                     algebra=LieAlgebra.from_structure_constants(np.zeros((1, 1, 1))),
                     moment=lambda x: jnp.zeros(1), vector_fields=lambda x: jnp.zeros((1, 2)), sample=sample)

    report = hamcheck.check(disc(1.2), points=32, only=["nondegenerate"])
    result = report.results["nondegenerate"]
    assert result.status == "pass", str(report)
    assert np.hypot(*result.worst_point) <= 1.0 + 1e-12
    # negative control: the circle inside the disc (radius 0.8) is still found between the samples
    bad = hamcheck.check(disc(0.8), points=32, only=["nondegenerate"]).results["nondegenerate"]
    assert bad.status == "fail" and abs(np.hypot(*bad.worst_point) - 0.8) < 1e-3
