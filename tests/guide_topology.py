"""Topological diagnostics of a guide motion: can any wave axis make it regular?

A design check of the construction (used by tests/test_eversion_topology.py), not part
of the product.

Along the guide g(lat, t) with unit tangent T, the waves keep the surface regular where
the *projected latitude direction* u = P_T(e_z x g) is small, provided the wave axis is a
nonvanishing normal field that follows u wherever u is comparable with the waves
(docs/eversion.md). Such an axis exists only if the zeros of u can be grouped into
regions of total index zero; in particular the indices of all zeros must sum to zero.

Two independent computations of that obstruction:

* :func:`latitude_direction_zeros` finds the zeros of u on a (lat, t) grid with their
  indices (winding of u around each grid cell, in a normal frame fixed per cell);
* :func:`tangent_sweep_class` measures the signed area swept by T over the (lat, t)
  rectangle, divided by 4 pi: the degree of T relative to the formal solution in which the
  tangent frame turns by pi about the sphere's normal (which sweeps zero net area).

The relative Euler number of the normal bundle T*(TS^2) is chi(S^2) = 2 times that degree,
so the index sum equals twice the sweep class (a test checks this). The guide motion of
the construction has class 0 by design (docs/eversion.md); a motion of class 1, as an
earlier design had, admits no wave axis at all.
"""

from __future__ import annotations

import numpy as np

from turnabout.eversion import construction as C
from turnabout.eversion.controls import Controls


def guide_frames(controls: Controls, lats: np.ndarray, times: np.ndarray):
    """Guide tangent T and projected latitude direction u on the grid, each (nt, nl, 3)."""
    lats = np.asarray(lats, dtype=float)
    T = np.empty((len(times), len(lats), 3))
    U = np.empty_like(T)
    for k, t in enumerate(times):
        state = C.stage_state(controls, float(t))
        g, g_d = C.guide_and_tangent(lats, state)
        tan = g_d / np.linalg.norm(g_d, axis=-1)[:, None]
        lat_vel = np.stack([-g[:, 1], g[:, 0], np.zeros(len(lats))], -1)
        U[k] = lat_vel - (lat_vel * tan).sum(-1)[:, None] * tan
        T[k] = tan
    return T, U


def _cell_windings(T: np.ndarray, U: np.ndarray) -> np.ndarray:
    """Winding number of U around each grid cell, (nt-1, nl-1) int."""
    eye = np.eye(3)
    ref = eye[np.argmin(np.abs(T[:-1, :-1]), axis=-1)]  # per-cell axis far from T
    corners = [
        (slice(None, -1), slice(None, -1)),
        (slice(None, -1), slice(1, None)),
        (slice(1, None), slice(1, None)),
        (slice(1, None), slice(None, -1)),
    ]
    angles = []
    for ci, cj in corners:
        tc, uc = T[ci, cj], U[ci, cj]
        e1 = ref - (ref * tc).sum(-1)[..., None] * tc
        e1 /= np.linalg.norm(e1, axis=-1)[..., None]
        e2 = np.cross(tc, e1)
        angles.append(np.arctan2((uc * e2).sum(-1), (uc * e1).sum(-1)))
    total = np.zeros(angles[0].shape)
    for q in range(4):
        d = angles[(q + 1) % 4] - angles[q]
        total += (d + np.pi) % (2 * np.pi) - np.pi
    return np.rint(total / (2 * np.pi)).astype(int)


def latitude_direction_zeros(controls: Controls, lats=None, times=None):
    """Zeros of the projected latitude direction: list of (t, lat, index).

    The default grid is offset from the equator and from the stage boundaries so that no
    zero falls on a grid node.
    """
    lats = np.linspace(-1.3, 1.3, 131) + 0.0073 if lats is None else np.asarray(lats)
    times = np.linspace(0.02, 0.98, 385) + 0.00117 if times is None else np.asarray(times)
    T, U = guide_frames(controls, lats, times)
    W = _cell_windings(T, U)
    i, j = np.nonzero(W)
    tc = 0.5 * (times[i] + times[i + 1])
    lc = 0.5 * (lats[j] + lats[j + 1])
    return [(float(a), float(b), int(w)) for a, b, w in zip(tc, lc, W[i, j], strict=True)]


def _spherical_area(a, b, c):
    """Signed area of the spherical triangles (a, b, c), elementwise."""
    num = (a * np.cross(b, c)).sum(-1)
    den = 1.0 + (a * b).sum(-1) + (b * c).sum(-1) + (c * a).sum(-1)
    return 2.0 * np.arctan2(num, den)


def tangent_sweep_class(controls: Controls, n_lat: int = 401, n_times: int = 801) -> float:
    """Signed area swept by the guide tangent over the (lat, t) rectangle, over 4 pi.

    An integer (up to discretisation) for any guide motion with the round sphere's end
    states and caps turned by +pi (south) and -pi (north); 0 is the class of the formal
    solution, and only class 0 admits a wave axis.
    """
    lats = np.linspace(-np.pi / 2 + 1e-3, np.pi / 2 - 1e-3, n_lat)
    times = np.linspace(0.0, 1.0, n_times)
    T, _ = guide_frames(controls, lats, times)
    a, b, c, d = T[:-1, :-1], T[:-1, 1:], T[1:, 1:], T[1:, :-1]
    area = _spherical_area(a, b, c) + _spherical_area(a, c, d)
    return float(area.sum() / (4 * np.pi))
