"""Quadruple points of mesh animations: four sheets through one point between two frames."""

from __future__ import annotations

import json
import os
import subprocess
import sys

import numpy as np
import pytest
import surfaces

from turnabout.check import check_animation
from turnabout.check.quadruple import quadruple_points
from turnabout.mesh import round_sphere_positions, uniform_sphere_mesh

# unit vectors to the vertices of a regular tetrahedron centred at the origin
TETRA = np.array([[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]], float) / np.sqrt(3)


def _turn(a: float, b: float) -> np.ndarray:
    rz = np.array([[np.cos(a), -np.sin(a), 0], [np.sin(a), np.cos(a), 0], [0, 0, 1]])
    rx = np.array([[1, 0, 0], [0, np.cos(b), -np.sin(b)], [0, np.sin(b), np.cos(b)]])
    return rx @ rz


def four_spheres(shift: float = 0.0, frames: int = 12, turned: bool = True):
    """Four unit spheres whose centres R(t) * TETRA move out from R = 0.85 to R = 1.15.

    Four equal spheres centred on a regular tetrahedron of circumradius R share a point only
    when R equals their radius (a common point is equidistant from the four centres, so it is
    the circumcentre; elementary geometry): once, at the origin, when R = 1. ``shift`` moves
    the fourth sphere's path outwards by that much, which keeps the circumradius of the four
    centres above 1 for every R in [0.85, 1.15] (so they miss). ``turned`` gives each
    sphere's mesh its own rotation, so the meshes share no symmetry.
    """
    mesh = uniform_sphere_mesh(32, 16)
    p0 = round_sphere_positions(mesh)
    f = mesh.triangles()
    out = []
    for t in np.linspace(0.0, 1.0, frames):
        R = 0.85 + 0.3 * t
        parts = []
        for i in range(4):
            rot = _turn(0.3 + 0.7 * i, 0.2 + 0.5 * i) if turned else np.eye(3)
            parts.append(p0 @ rot.T + (R + (shift if i == 3 else 0.0)) * TETRA[i])
        out.append(np.concatenate(parts))
    faces = np.concatenate([f + i * len(p0) for i in range(4)])
    return np.array(out), faces


def test_four_spheres_meeting_once_have_one_quadruple_point_at_the_circumcentre():
    P, F = four_spheres()
    q = quadruple_points(P, F)
    assert q.count == 1 and q.general_position and q.notes == []
    assert bool(q.confirmed[0])  # the triple points' tetrahedron turns inside out
    # at the circumcentre, up to the mesh's chordal error (32 x 16 sphere: ~1 %)
    assert np.linalg.norm(q.position[0]) < 0.02
    # R = 1 at t = 1/2, frame 5.5 of 0..11; the inscribed mesh lies slightly inside the
    # sphere, so the moment comes a little earlier
    assert 5.0 < q.time[0] < 5.5 and q.interval[0] == 5
    # one triangle of each sphere (four components of equal size)
    assert sorted(q.faces[0] // (F.shape[0] // 4)) == [0, 1, 2, 3]


@pytest.mark.parametrize("frames", [2, 4, 6])
def test_few_frames_find_the_one_quadruple_point(frames):
    # near the moment the triple points move much faster than the vertices (across several
    # triangles of each sphere per frame): every candidate quadruple is solved, so the point
    # is found however coarsely the motion is sampled
    P, F = four_spheres(frames=frames)
    q = quadruple_points(P, F)
    assert q.count == 1 and np.linalg.norm(q.position[0]) < 0.02
    # the same moment of the motion, whatever the frame count: R = 1 a little before t = 1/2
    assert 0.47 < q.time[0] / (frames - 1) < 0.5


def test_four_spheres_that_miss_have_no_quadruple_point():
    P, F = four_spheres(shift=0.6)
    q = quadruple_points(P, F)
    assert q.count == 0 and q.general_position


def test_a_rigid_motion_has_no_quadruple_point():
    # Boy's surface keeps its single triple point (Kusner, Bull. AMS 1987) while it turns
    # rigidly: four sheets never meet
    p, f = surfaces.boy_surface(40)
    P = np.array([p @ _turn(0.05 * k, 0.03 * k).T for k in range(8)])
    q = quadruple_points(P, f)
    assert q.count == 0 and q.general_position


def test_four_moving_planes_meet_at_the_predicted_moment():
    # four big triangles in the planes x = s - 1/2, y = 0, z = 0 and x + y + z = 1/4: the
    # first three meet at (s - 1/2, 0, 0), which reaches the fourth plane at s = 3/4
    big = np.array([[-3.0, -3.0], [3.5, -2.5], [-2.0, 3.0]])

    def tri(plane: str, s: float) -> np.ndarray:
        u, v = big[:, 0], big[:, 1]
        if plane == "x":
            return np.column_stack([np.full(3, s - 0.5), u, v])
        if plane == "y":
            return np.column_stack([u, np.zeros(3), v])
        if plane == "z":
            return np.column_stack([u, v, np.zeros(3)])
        # x + y + z = 1/4 through (1/4, 0, 0), spanned by (1, -1, 0) and (1, 1, -2) / 2
        e1, e2 = np.array([1.0, -1.0, 0.0]), np.array([0.5, 0.5, -1.0])
        return 0.25 * np.array([1.0, 0, 0]) + u[:, None] * e1 + v[:, None] * e2

    P = np.array([np.concatenate([tri(w, s) for w in "xyzd"]) for s in (0.0, 1.0)])
    F = np.arange(12).reshape(4, 3)
    q = quadruple_points(P, F)
    assert q.count == 1
    assert abs(q.time[0] - 0.75) < 1e-9
    assert np.allclose(q.position[0], [0.25, 0.0, 0.0], atol=1e-9)
    assert sorted(q.faces[0].tolist()) == [0, 1, 2, 3]


# a fixed generic frame: a rotation and a shift, so no coordinate is exactly zero
_ROT = _turn(0.7, 1.3) @ _turn(2.1, 0.4)
_SHIFT = np.array([0.31, -0.17, 0.23])
_BIG = np.array([[-3.0, -3.0], [3.5, -2.5], [-2.0, 3.0]])


def _plane_triangle(normal, offset: float) -> np.ndarray:
    """A big triangle (3, 3) in the plane normal . y = offset (y the unturned coordinates),
    around the plane's point nearest the origin, then turned and shifted by _ROT, _SHIFT."""
    n = np.asarray(normal, float) / np.linalg.norm(normal)
    e1 = np.cross(n, [0.3, 0.5, 0.8])
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(n, e1)
    y = offset * n + _BIG[:, :1] * e1 + _BIG[:, 1:] * e2
    return y @ _ROT.T + _SHIFT


def four_planes(delta: float, frames: int = 2, copy_at=None, copy_offset: float = 0.0):
    """Triangles in the planes x = 0, y = 0, z = 0 (fixed) and x + y + z = 3 delta: the
    first three meet at the origin, so the four triple points are the origin and the fourth
    plane's points 3 delta out on each axis (elementary geometry). Static over ``frames``
    frames. ``copy_at`` adds a
    copy of the four triangles shifted by that vector, whose fourth plane moves from
    offset -1 to 1 (plus ``copy_offset``): a quadruple point at s = 1/2 - copy_offset / 2."""
    base = [_plane_triangle(ax, 0.0) for ax in np.eye(3)]
    d = _plane_triangle([1.0, 1.0, 1.0], np.sqrt(3) * delta)
    out = []
    for s in np.linspace(0.0, 1.0, frames):
        tris = base + [d]
        if copy_at is not None:
            tris += [t + copy_at for t in base]
            tris += [_plane_triangle([1.0, 1.0, 1.0], 2 * s - 1 + copy_offset) + copy_at]
        out.append(np.concatenate(tris))
    return np.array(out), np.arange(3 * len(tris)).reshape(-1, 3)


@pytest.mark.parametrize("delta", [1e-4, 1e-3])
def test_four_triple_points_inside_the_merge_radius_are_not_four_sheets_through_one_point(delta):
    # four sheets that never share a point: their four triple points are distinct but closer
    # than the merge radius (1 % of an edge of these triangles, edges about 6 long), so the
    # frame sees one point with 12 detections. Only 3 of them agree to rounding, and no
    # quadruple point exists (the fourth plane never reaches the others' common point)
    from turnabout.check import self_intersections
    from turnabout.check.intersections import TRIPLE_MERGE
    from turnabout.check.topology import MeshTopology

    P, F = four_planes(delta, frames=3)
    res = self_intersections(P[0], MeshTopology(F, P.shape[1]))
    assert 3 * np.sqrt(2) * delta < TRIPLE_MERGE * 6  # the four points' largest distance
    assert list(res.triple_detections) == [12] and list(res.triple_coincident) == [3]
    q = quadruple_points(P, F)
    assert q.count == 0 and q.general_position and q.notes == []


def test_four_sheets_through_one_point_at_a_frame_are_not_general_position():
    # the same four planes through one point (delta = 0): twelve detections that agree to
    # rounding, in every frame (and the planes keep that common point)
    from turnabout.check import self_intersections
    from turnabout.check.topology import MeshTopology

    P, F = four_planes(0.0, frames=3)
    topo = MeshTopology(F, P.shape[1])
    res = self_intersections(P[0], topo)
    assert list(res.triple_detections) == [12] and list(res.triple_coincident) == [12]
    frames = {k: self_intersections(P[k], topo) for k in range(P.shape[0])}
    q = quadruple_points(P, F, frame_intersections=frames)
    assert not q.general_position
    assert any("frame(s) with points where four or more sheets meet" in n for n in q.notes)


@pytest.mark.parametrize(("offset", "copies"), [(0.0, True), (2e-8, False), (-2e-6, False)])
def test_only_moments_equal_to_rounding_are_shared(offset, copies):
    # two groups of four planes far apart, each with one quadruple point (the fourth plane
    # of each crosses the other three's common point): a translated copy (offset 0) meets at
    # the very same moment, s = 1/2 (elementary geometry), a symmetric pair; a copy whose
    # fourth plane starts 2e-8 further on meets 1e-8 of a frame earlier: two moments
    def one_group(shift, extra):
        P, F = four_planes(0.0, copy_at=shift, copy_offset=extra)
        return P[:, 12:], F[:4]

    (A, fa), (B, _) = one_group(np.zeros(3), 0.0), one_group(np.array([40.0, 0, 0]), offset)
    P, F = np.concatenate([A, B], axis=1), np.concatenate([fa, fa + 12])
    q = quadruple_points(P, F)
    assert q.count == 2 and np.all(q.confirmed)
    assert sorted(q.time) == pytest.approx([0.5 - max(offset, 0) / 2, 0.5 - min(offset, 0) / 2],
                                           abs=1e-12)  # fmt: skip
    assert any("share their moment" in n for n in q.notes) == copies
    assert q.general_position == (not copies)


def test_a_quadruple_point_next_to_a_frame_is_found():
    # x = 0 and y = 0 fixed, z = 10 s rising out of both, and the plane x + y + z =
    # sqrt(3) off(s), off(s) = 10 s / sqrt(3) + d0 (1 - s / s0): the first three meet at
    # (0, 0, 10 s), on the fourth exactly when s = s0 (elementary geometry). At frame 0 the
    # four triple points lie within 3e-4 of each other, one merged point; at frame 1 no sheet
    # meets another inside its triangle
    d0, s0 = 1e-4, 1e-3
    P = []
    for s in (0.0, 1.0):
        off = 10 * s / np.sqrt(3) + d0 * (1 - s / s0)
        tris = [_plane_triangle([1, 0, 0], 0.0), _plane_triangle([0, 1, 0], 0.0),
                _plane_triangle([0, 0, 1], 10 * s), _plane_triangle([1, 1, 1], off)]  # fmt: skip
        P.append(np.concatenate(tris))
    P, F = np.array(P), np.arange(12).reshape(4, 3)
    q = quadruple_points(P, F)
    assert q.count == 1 and q.general_position and bool(q.confirmed[0])
    assert abs(q.time[0] - s0) < 1e-9
    assert np.allclose(q.position[0], np.array([0, 0, 10 * s0]) @ _ROT.T + _SHIFT, atol=1e-9)


def test_mirror_symmetric_spheres_still_have_their_one_quadruple_point():
    # the same four spheres with identical, unrotated meshes: the configuration and the
    # meshes share mirror planes (x = y swaps spheres 1 and 2), so the point sits on mesh
    # edges; found in the triangles on both sides of an edge, it is still one point
    P, F = four_spheres(turned=False)
    q = quadruple_points(P, F)
    assert q.count == 1 and bool(q.confirmed[0]) and np.linalg.norm(q.position[0]) < 0.02
    assert sorted(q.faces[0] // (F.shape[0] // 4)) == [0, 1, 2, 3]


def test_check_animation_reports_quadruple_points_in_json():
    P, F = four_spheres(frames=8)
    rep = check_animation(P, F, quadruple=True)
    d = json.loads(json.dumps(rep.to_dict()))
    qp = d["quadruple_points"]
    assert qp["count"] == 1 and qp["general_position"] is True
    (pt,) = qp["points"]
    assert (
        pt["frames"][1] == pt["frames"][0] + 1 and pt["frames"][0] <= pt["time"] <= pt["frames"][1]
    )
    assert len(pt["faces"]) == 4 and len(pt["position"]) == 3
    assert check_animation(P, F).to_dict()["quadruple_points"] is None


def test_cli_prints_quadruple_points_and_refuses_them_without_intersections(tmp_path):
    P, F = four_spheres(frames=8)
    path = tmp_path / "spheres.npz"
    np.savez(path, positions=P.astype(np.float32), faces=F)
    env = dict(os.environ)
    cmd = [sys.executable, "-m", "turnabout.cli", "check", str(path), "--quadruple-points"]
    out = subprocess.run(cmd + ["--json", str(tmp_path / "r.json")], capture_output=True,
                         text=True, env=env)  # fmt: skip
    assert "quadruple points: 1" in out.stdout, out.stdout + out.stderr
    assert json.loads((tmp_path / "r.json").read_text())["quadruple_points"]["count"] == 1
    bad = subprocess.run(cmd + ["--no-intersections"], capture_output=True, text=True, env=env)
    assert bad.returncode == 2 and "--quadruple-points" in bad.stderr


@pytest.mark.parametrize("eps", [0.0, 0.3])
def test_bad_input_is_refused(eps):
    from turnabout.eversion.generic import break_symmetry

    P, F = four_spheres(frames=3)
    with pytest.raises(ValueError, match="eps"):
        break_symmetry(P, F, eps=eps)
    with pytest.raises(ValueError, match="positions"):
        quadruple_points(P[:1], F)
    for workers in (0, 1.5, True):
        with pytest.raises(ValueError, match="workers"):
            quadruple_points(P, F, workers=workers)


# --------------------------------------------------------------------------- the eversion


@pytest.fixture(scope="module")
def coarse_eversion():
    from turnabout.eversion import Controls, evaluate, mesh_for

    c = Controls()
    mesh = mesh_for(c, n_lon=64, n_lat=16, spacing="even")
    return c, mesh, evaluate(c, [0.0], mesh)[0], mesh.triangles()


def test_symmetry_breaking_keeps_the_spheres_and_every_triangle_the_same_way_up(coarse_eversion):
    from turnabout.eversion import evaluate
    from turnabout.eversion.generic import KMAX, break_symmetry, displacement_bound

    c, mesh, _, F = coarse_eversion
    t = np.linspace(0.0, 1.0, 25)
    P = evaluate(c, t, mesh)
    G = break_symmetry(P, F, t, eps=0.05)
    assert np.array_equal(G[0], P[0]) and np.allclose(G[-1], P[-1], atol=1e-15)
    assert 0 < displacement_bound(P, G, F) <= 0.05 * KMAX

    # an immersion stays one: no triangle turns over or collapses (each turns < 26 degrees)
    def normals(X):
        T = X[:, F]
        n = np.cross(T[:, :, 1] - T[:, :, 0], T[:, :, 2] - T[:, :, 0])
        return n / np.linalg.norm(n, axis=-1, keepdims=True)

    assert np.min(np.sum(normals(P) * normals(G), axis=-1)) > 0.9
    before = check_animation(P, F, intersections=False)
    after = check_animation(G, F, intersections=False)
    assert [f.degree for f in after.frames] == pytest.approx([f.degree for f in before.frames])


def test_the_symmetric_eversion_is_not_in_general_position_and_the_displaced_one_loses_its_copies(
    coarse_eversion,
):
    # the corrugated eversion is symmetric under a turn by one strip: eight sheets meet on
    # the axis and quadruple points come in copies at one moment. Breaking the symmetry
    # removes both (what may remain in so coarse a mesh: crowded triple points)
    from turnabout.eversion import evaluate
    from turnabout.eversion.generic import break_symmetry

    c, mesh, rest, F = coarse_eversion
    t = np.linspace(0.55, 0.6, 6)
    P = evaluate(c, t, mesh)
    sym = quadruple_points(P, F)
    assert not sym.general_position
    assert any("more than four sheets meet (up to 8)" in n for n in sym.notes)
    assert any("symmetric copies" in n for n in sym.notes)
    gen = quadruple_points(break_symmetry(P, F, t, eps=0.1, rest=rest), F)
    assert gen.count > 0 and np.all(gen.confirmed)
    assert not any("more than four sheets" in n or "symmetric copies" in n for n in gen.notes)
    assert not any("common point for a whole interval" in n for n in gen.notes)


def test_a_window_of_the_generic_default_eversion_is_certified_and_workers_agree():
    # five frames of the default build (94,080 triangles) where the displaced motion has
    # about a hundred quadruple points: no coincident triple points, no shared moments, every
    # point confirmed, and two worker processes give the very same points (the parity needs
    # the whole eversion: see docs/checker.md for the full count)
    from turnabout.eversion import Controls, evaluate, mesh_for
    from turnabout.eversion.controls import default_frames
    from turnabout.eversion.generic import break_symmetry

    c = Controls()
    mesh = mesh_for(c)
    F = mesh.triangles()
    t = np.linspace(0.0, 1.0, default_frames(c.strips))[236:241]
    rest = evaluate(c, [0.0], mesh)[0]
    G = break_symmetry(evaluate(c, t, mesh), F, t, rest=rest)
    q = quadruple_points(G, F)
    assert q.general_position and q.notes == [], q.notes
    assert q.count > 50 and np.all(q.confirmed)
    two = quadruple_points(G, F, workers=2)
    assert np.array_equal(two.time, q.time) and np.array_equal(two.faces, q.faces)
    assert np.array_equal(two.position, q.position)


def _solve_all(P, F, quads):
    """Reference: the interval solve on the given quadruples of every interval (merged the
    way quadruple_points merges)."""
    from turnabout.check.quadruple import _merge, quadruple_points_between_quads
    from turnabout.check.topology import MeshTopology

    topo = MeshTopology(F, P.shape[1])
    ks, ss, xs, fs, cs = [], [], [], [], []
    for k in range(P.shape[0] - 1):
        s, x, fq, conf, _, _ = quadruple_points_between_quads(P[k], P[k + 1], topo, quads(k))
        ks.append(np.full(s.size, k)), ss.append(s), xs.append(x), fs.append(fq), cs.append(conf)
    k, s = np.concatenate(ks), np.concatenate(ss)
    x, fq = np.concatenate(xs).reshape(-1, 3), np.concatenate(fs).reshape(-1, 4)
    e = P[0][topo.edges[:, 1]] - P[0][topo.edges[:, 0]]
    keep, _ = _merge(k, s, x, fq, np.concatenate(cs), float(np.linalg.norm(e, axis=1).mean()))
    return k[keep] + s[keep], np.sort(fq[keep], axis=1)


def test_candidates_lose_no_quadruple_point_of_a_triangle_soup():
    # 36 separate triangles moving on random straight lines through a small box: the solve
    # on every one of the 58,905 quadruples of triangles is the reference (no candidate
    # selection at all); the checker's candidates must give exactly its points
    from itertools import combinations

    rng = np.random.default_rng(20261205)
    n = 36
    P = rng.uniform(-1.0, 1.0, (4, 3 * n, 3))
    P += (
        rng.uniform(-0.6, 0.6, (1, n, 1, 3)).repeat(3, axis=2).reshape(1, 3 * n, 3)
        * np.arange(4)[:, None, None]
    )
    F = np.arange(3 * n).reshape(n, 3)
    every = np.array(list(combinations(range(n), 4)), np.int64)
    t_ref, f_ref = _solve_all(P, F, lambda k: every)
    q = quadruple_points(P, F)
    assert t_ref.size > 20  # a soup this dense has many
    order = np.argsort(q.time)
    assert np.array_equal(q.time[order], np.sort(t_ref))
    assert np.array_equal(np.sort(q.faces, axis=1)[order], f_ref[np.argsort(t_ref)])


def test_the_separating_axes_lose_no_quadruple_point_of_a_coarse_eversion(monkeypatch):
    # a coarse generic eversion (3,072 triangles, 120 frames), interval 54 (about 600
    # points): the candidates from the swept graph with its separating-axis test against
    # those from boxes alone (every pair whose boxes of end positions overlap), which gives
    # about four times as many quadruples to solve
    from turnabout.check import quadruple_candidates as qc
    from turnabout.check.intersections import grid_candidate_pairs
    from turnabout.eversion import Controls, evaluate, mesh_for
    from turnabout.eversion.generic import break_symmetry

    c = Controls()
    mesh = mesh_for(c, n_lon=64, n_lat=24)
    F = mesh.triangles()
    t = np.linspace(0.0, 1.0, 120)[54:56]
    G = break_symmetry(evaluate(c, t, mesh), F, t, rest=evaluate(c, [0.0], mesh)[0])
    q = quadruple_points(G, F)

    def box_pairs(P0, P1, topo):
        corners = np.concatenate([P0[topo.faces], P1[topo.faces]], axis=1)
        a, b = grid_candidate_pairs(corners.min(axis=1), corners.max(axis=1))
        share = (topo.faces[a][:, :, None] == topo.faces[b][:, None, :]).any(axis=(1, 2))
        a, b = a[~share], b[~share]
        order = np.lexsort((b, a))
        return a[order], b[order]

    monkeypatch.setattr(qc, "swept_pairs", box_pairs)
    boxes = quadruple_points(G, F)
    assert q.count > 400 and boxes.count == q.count
    assert np.array_equal(boxes.time, q.time) and np.array_equal(boxes.faces, q.faces)
    assert boxes.candidates > 2 * q.candidates


def test_the_generic_default_eversion_has_an_odd_number_of_quadruple_points():
    # Max and Banchoff ("Every sphere eversion has a quadruple point", Contributions to
    # Analysis and Geometry, Johns Hopkins University Press, 1981): a sphere eversion in
    # general position has an odd number of quadruple points. The default build (480 frames
    # x 94,080 triangles) with its symmetry broken: every frame an immersion by the frame
    # check, the motion in general position by the checker's rules, and an odd count
    from turnabout.eversion import Controls, build
    from turnabout.eversion.generic import break_symmetry

    ev = build(Controls())
    P = np.asarray(ev.positions, np.float64)
    G = break_symmetry(P, ev.faces, ev.times, rest=P[0])
    del P
    frames = check_animation(G, ev.faces, intersections=False)
    assert frames.failing_frames() == [] and frames.everted
    q = quadruple_points(G, ev.faces, workers=2)
    assert q.general_position and q.notes == [], q.notes
    assert np.all(q.confirmed)
    assert q.count % 2 == 1, q.count
