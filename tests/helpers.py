"""Builders shared by several test files (tests never import each other)."""

from __future__ import annotations

import numpy as np
from scipy.integrate import solve_ivp

from hamcheck import circle


def potential():
    """A smooth non-constant Hill potential (invented: the tidal load on a ring station)."""
    return circle.Periodic.from_real_modes([1, 2, 3], [0.2, -0.1, 0.05], [0.1, 0.0, -0.07], a0=0.4)


def dop853_monodromy(T, c):
    """Independent oracle: scipy's DOP853 on Y' = [[0, 1], [-T/c, 0]] Y (references.md, Virasoro)."""

    def rhs(t, y):
        q = float(T(np.array([t]))[0]) / c
        return (np.array([[0.0, 1.0], [-q, 0.0]]) @ y.reshape(2, 2)).ravel()

    sol = solve_ivp(rhs, (0, 2 * np.pi), np.eye(2).ravel(), method="DOP853", rtol=1e-13, atol=1e-14)
    return sol.y[:, -1].reshape(2, 2)


def rel(a, b):
    """Largest entry of a - b over the largest entry of a or b."""
    a, b = np.asarray(a), np.asarray(b)
    return float(np.max(np.abs(a - b)) / max(np.max(np.abs(a)), np.max(np.abs(b)), 1e-300))


def spokes(M=64, a=0.35):
    """Invented scenario: the SU(2) connection read around the rim of a toy gauge-field wheel (orbit of a e_3)."""
    from hamcheck import loop_groups as lg

    g = lg.Loop.exponential(lg.SU2, {1: ([0.4, 0, 0.1], [0, 0.3, 0]), 2: ([0, 0.2, 0], [0.1, 0, 0])}, M)
    return lg.gauge_action(g, lg.constant_connection(a, M), 1.0)
