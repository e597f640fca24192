"""The crease-concentration rule on surfaces with known answers: smooth bends on coarse grids
stay quiet, kinks along a grid line and across a grid are flagged where they are."""

from __future__ import annotations

import numpy as np
import pytest

from turnabout.check import Thresholds, check_animation, signed_volume
from turnabout.check.metrics import frame_metrics, reference_frame
from turnabout.check.topology import MeshTopology
from turnabout.mesh import round_sphere_positions, uniform_sphere_mesh


def _icosphere(level: int) -> tuple[np.ndarray, np.ndarray]:
    """Unit icosphere: the icosahedron's faces split in four ``level`` times, projected.

    Returns positions (V, 3) float64 and outward faces (20 * 4**level, 3) int64. Icosahedron
    vertices (0, +-1, +-phi) and their cyclic permutations (Coxeter, "Regular Polytopes",
    1973).
    """
    t = (1 + 5**0.5) / 2
    v = [(-1, t, 0), (1, t, 0), (-1, -t, 0), (1, -t, 0), (0, -1, t), (0, 1, t),
         (0, -1, -t), (0, 1, -t), (t, 0, -1), (t, 0, 1), (-t, 0, -1), (-t, 0, 1)]  # fmt: skip
    f = [(0, 11, 5), (0, 5, 1), (0, 1, 7), (0, 7, 10), (0, 10, 11), (1, 5, 9), (5, 11, 4),
         (11, 10, 2), (10, 7, 6), (7, 1, 8), (3, 9, 4), (3, 4, 2), (3, 2, 6), (3, 6, 8),
         (3, 8, 9), (4, 9, 5), (2, 4, 11), (6, 2, 10), (8, 6, 7), (9, 8, 1)]  # fmt: skip
    P = np.array(v, float)
    F = np.array(f, np.int64)
    P /= np.linalg.norm(P, axis=1, keepdims=True)
    for _ in range(level):
        e = np.sort(np.concatenate([F[:, [0, 1]], F[:, [1, 2]], F[:, [2, 0]]]), axis=1)
        uniq, inv = np.unique(e, axis=0, return_inverse=True)
        mid = P[uniq].mean(axis=1)
        mid /= np.linalg.norm(mid, axis=1, keepdims=True)
        ab, bc, ca = (len(P) + inv.ravel().reshape(3, -1)).astype(np.int64)
        P = np.vstack([P, mid])
        a, b, c = F.T
        F = np.concatenate([np.stack(x, 1) for x in ((a, ab, ca), (b, bc, ab), (c, ca, bc),
                                                       (ab, bc, ca))])  # fmt: skip
    return P, F


def _judged(fm):
    """Edges the concentration rule judges, and whether each is flagged."""
    th = Thresholds()
    judged = fm.crease_deg >= th.concentration_min_deg
    return judged, judged & (fm.crease_concentration >= th.concentration_warn)


def _wing_ratio(fm, topo):
    """The former rule: an edge's angle over the mean of its four wing edges (the other
    edges of its two faces; floor 1°), on a closed mesh."""
    fe = topo.face_edges[topo.edge_faces]  # (E, 2, 3)
    wings = fe[fe != np.arange(topo.n_edges)[:, None, None]].reshape(-1, 4)
    return fm.crease_deg / np.maximum(fm.crease_deg[wings].mean(axis=1), 1.0)


def _ring_edges(mesh, topo, k):
    """(E,) bool: the edges joining two vertices of latitude ring k."""
    lo = 1 + k * mesh.n_lon
    inside = (topo.edges >= lo) & (topo.edges < lo + mesh.n_lon)
    return inside.all(axis=1)


def test_ring_edge_neighbours_are_the_ring_edges_one_row_over():
    # on a quad grid split by diagonals, an edge along a ring has, on each side, the ring
    # edges of the next ring as its most parallel neighbours, never its own ring
    mesh = uniform_sphere_mesh(24, 12)
    p = round_sphere_positions(mesh)
    topo = MeshTopology(mesh.triangles(), len(p))
    nb = reference_frame(p, topo).crease_neighbours
    for k in (3, 6):
        ring = np.flatnonzero(_ring_edges(mesh, topo, k))
        above, below = _ring_edges(mesh, topo, k + 1), _ring_edges(mesh, topo, k - 1)
        sides = nb[ring]
        assert np.all(above[sides] | below[sides])
        assert np.all(above[sides].sum(axis=1) == 1)  # one on each side
        assert not np.any(np.isin(sides, ring))  # the crease line's own continuation: never


@pytest.mark.parametrize(("n_lat", "squash"), [(48, 0.15), (64, 0.1)])
def test_squashed_lens_rim_is_a_smooth_bend_not_a_crease(n_lat, squash):
    # The sphere scaled by `squash` along z is an oblate ellipsoid whose rim bends with
    # radius squash^2 (an ellipse x = cos u, z = c sin u has curvature 1 / c^2 at u = 0;
    # classical). On this grid the rim turns by 20-30 degrees between neighbouring faces:
    # coarsely sampled but smooth, the same on the next rows. Not a crease.
    mesh = uniform_sphere_mesh(2 * n_lat, n_lat)
    p0 = round_sphere_positions(mesh)
    faces = mesh.triangles()
    lens = p0 * np.array([1.0, 1.0, squash])
    topo = MeshTopology(faces, len(p0))
    fm = frame_metrics(lens, topo, reference_frame(p0, topo))
    judged, flagged = _judged(fm)
    assert 20.0 < fm.crease_deg.max() < Thresholds().crease_warn_deg
    assert judged.sum() >= mesh.n_lon  # the whole rim is judged...
    assert not flagged.any()  # ...and none of it is a crease
    assert fm.crease_concentration[judged].max() < 1.5
    # the wing rule called this rim a crease (the false warning this rule replaces)
    assert _wing_ratio(fm, topo)[judged].max() >= Thresholds().concentration_warn
    # the checker on the lens alone (its own reference frame): nothing to say
    rep = check_animation(lens, faces, intersections=False)
    assert rep.frames[0].verdict == "ok", rep.frames[0].reasons


@pytest.mark.parametrize(("n_lat", "ring", "a"), [(96, 60, 0.5), (128, 40, 0.5), (128, 80, 1.0)])
def test_kink_along_a_ring_is_flagged_there_with_the_profile_angle(n_lat, ring, a):
    # Radius scaled by s = 1 + a |z - z0| with z0 = sin(lat0) on a ring. In a meridian plane
    # the profile is r(lat) = s (polar form); its tangent leans atan(r' / r) from the
    # latitude direction, and at z0 (r = 1) r' = dr/dlat = +-a cos(lat0) = +-a sqrt(1 - z0^2)
    # on the two sides. So the profile turns by 2 atan(a sqrt(1 - z0^2)) there (a groove, as
    # r is least at z0): the exterior angle of the kink (derived here; the mesh value lies
    # below it by about one row's turning, as the sphere bends the other way).
    mesh = uniform_sphere_mesh(2 * n_lat, n_lat)
    p0 = round_sphere_positions(mesh)
    z0 = float(np.sin(mesh.lat[ring]))
    kinked = p0 * (1.0 + a * np.abs(p0[:, 2] - z0))[:, None]
    topo = MeshTopology(mesh.triangles(), len(p0))
    fm = frame_metrics(kinked, topo, reference_frame(p0, topo))
    on_ring = _ring_edges(mesh, topo, ring)
    exterior = np.degrees(2 * np.arctan(a * np.sqrt(1 - z0 * z0)))
    assert np.allclose(fm.crease_deg[on_ring], exterior, rtol=0.05)
    _, flagged = _judged(fm)
    assert np.array_equal(flagged, on_ring)  # the whole ring, and nothing else
    rep = check_animation(kinked, mesh.triangles(), intersections=False)
    (reason,) = [r for r in rep.frames[0].reasons if r.startswith("crease concentrated")]
    edge = int(reason.split("edge ")[1].split()[0])
    assert on_ring[edge]


def test_kink_across_an_icosphere_is_flagged_along_the_kink():
    # The same kink, radius scaled by 1 + a |n . p - c|, on an icosphere and along a plane
    # that follows no grid line: the turning gathers on a zigzag band of edges beside the
    # plane. At a = 0.3 every edge stays under the plain crease warning (30 degrees): only
    # the concentration rule sees this crease.
    p0, faces = _icosphere(5)
    assert signed_volume(p0, faces) > 0
    n = np.array([0.3, 0.5, 0.81])
    n /= np.linalg.norm(n)
    c, a = 0.35, 0.3
    kinked = p0 * (1.0 + a * np.abs(p0 @ n - c))[:, None]
    topo = MeshTopology(faces, len(p0))
    fm = frame_metrics(kinked, topo, reference_frame(p0, topo))
    _, flagged = _judged(fm)
    assert fm.crease_deg.max() < Thresholds().crease_warn_deg
    # flagged edges lie along the kink: within one edge length of the plane, all around it
    h = np.linalg.norm(p0[topo.edges[:, 0]] - p0[topo.edges[:, 1]], axis=1).max()
    mid = kinked[topo.edges].mean(axis=1)
    ends = p0[topo.edges]
    assert flagged.sum() > 20
    assert np.all(np.abs(ends[flagged] @ n - c) < h)
    around = np.cross(n, [1.0, 0.0, 0.0])
    angle = np.arctan2(mid[flagged] @ np.cross(n, around), mid[flagged] @ around)
    assert np.ptp(angle) > 1.5 * np.pi  # all the way round
    rep = check_animation(kinked, faces, intersections=False)
    assert rep.frames[0].verdict == "warn"
    assert [r.split(":")[0] for r in rep.frames[0].reasons] == ["crease concentrated"]


def test_smooth_squash_of_an_icosphere_is_not_a_crease():
    # the lens again on a triangulation with no grid directions (valence 5 and 6)
    p0, faces = _icosphere(4)
    lens = p0 * np.array([1.0, 1.0, 0.1])
    topo = MeshTopology(faces, len(p0))
    fm = frame_metrics(lens, topo, reference_frame(p0, topo))
    judged, flagged = _judged(fm)
    assert judged.any() and not flagged.any()
