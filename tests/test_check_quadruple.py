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
def test_few_frames_find_the_one_quadruple_point_with_substeps(frames):
    # near the moment the triple points move much faster than the vertices; seeding each
    # interval from intermediate positions too finds the moment wherever it falls
    P, F = four_spheres(frames=frames)
    q = quadruple_points(P, F, substeps=8)
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


def test_a_symmetric_motion_is_reported_as_not_in_general_position():
    # the same four spheres with identical, unrotated meshes: mirror symmetries of the
    # configuration make planes of four triangles keep a common point
    P, F = four_spheres(turned=False)
    q = quadruple_points(P, F)
    assert not q.general_position and q.notes


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
    with pytest.raises(ValueError, match="substeps"):
        quadruple_points(P, F, substeps=0)


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
