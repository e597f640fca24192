"""The wall over a curve homotopy and the mark beads: layout, topology, orientation."""

from __future__ import annotations

import numpy as np
import pytest
from curve_shapes import circle, limacon, wobbly_circle
from references import require

from turnabout.curves import marks_per_frame, regular_homotopy
from turnabout.curves.wall import mark_beads, wall_faces, wall_height_for, wall_positions


def _edges(quads: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Unique undirected edges of a quad mesh and how many quads hold each."""
    e = np.stack([quads, np.roll(quads, -1, axis=1)], axis=2).reshape(-1, 2)
    e = np.sort(e, axis=1)
    return np.unique(e, axis=0, return_counts=True)


@pytest.mark.parametrize("n", [3, 7, 64])
def test_wall_is_an_annulus_rungs_in_two_quads_rings_in_one_euler_zero(n):
    quads = wall_faces(n)
    assert quads.shape == (n, 4) and quads.dtype == np.int32
    edges, held = _edges(quads)
    rung = (edges[:, 1] - edges[:, 0]) == n  # bottom k to top k
    assert rung.sum() == n and np.all(held[rung] == 2)
    assert (~rung).sum() == 2 * n and np.all(held[~rung] == 1)
    # Euler characteristic of an annulus is 0 (handbook fact: chi = 2 - 2g - b, g = 0, b = 2)
    assert 2 * n - len(edges) + n == 0


def test_triangulated_wall_agrees_with_trimesh_on_euler_number_and_boundary():
    trimesh = require("trimesh")
    pts = circle(40)
    quads = wall_faces(40)
    tris = np.concatenate([quads[:, [0, 1, 2]], quads[:, [0, 2, 3]]])
    mesh = trimesh.Trimesh(wall_positions(pts, 0.3)[0], tris, process=False)
    assert mesh.euler_number == 0
    assert not mesh.is_watertight
    # every quad's two triangles share the diagonal, and neighbours share rungs consistently
    assert mesh.is_winding_consistent


def test_wall_positions_stand_each_frame_on_z_zero_up_to_height():
    h = regular_homotopy(circle(200), limacon(300, b=1.6), frames=9, samples=128)
    pos = wall_positions(h.points, height=0.25)
    assert pos.shape == (9, 256, 3) and pos.dtype == np.float32
    assert np.allclose(pos[:, :128, :2], h.points, atol=1e-6)
    assert np.allclose(pos[:, 128:, :2], h.points, atol=1e-6)
    assert np.all(pos[:, :128, 2] == 0) and np.allclose(pos[:, 128:, 2], 0.25)


def test_front_side_faces_outwards_on_a_counter_clockwise_circle():
    pts = circle(64, radius=2.0)
    pos = wall_positions(pts, 0.5, dtype=np.float64)[0]
    q = wall_faces(64)
    normal = np.cross(pos[q[:, 1]] - pos[q[:, 0]], pos[q[:, 3]] - pos[q[:, 0]])
    centre = pos[q].mean(axis=1)
    assert np.all(np.einsum("ij,ij->i", normal[:, :2], centre[:, :2]) > 0)


def test_bad_wall_input_is_refused_with_what_was_wrong():
    with pytest.raises(ValueError, match="height"):
        wall_positions(circle(10), 0.0)
    with pytest.raises(ValueError, match=r"\(F, N, 2\)"):
        wall_positions(np.zeros((4, 3)), 1.0)
    bad = circle(10)
    bad[3, 0] = np.nan
    with pytest.raises(ValueError, match="not finite"):
        wall_positions(bad, 1.0)
    with pytest.raises(ValueError, match="fraction"):
        wall_height_for(circle(10), -1)


def test_wall_height_is_a_fraction_of_the_largest_extent():
    assert wall_height_for(circle(100, radius=3.0), 0.1) == pytest.approx(0.6, rel=1e-3)


def test_beads_follow_marks_and_have_no_area_while_their_mark_is_absent():
    # a round circle (2 marks for direction 0) to a five-wave wobbly curve with inflections
    wobbly = wobbly_circle(400, amp=0.3, waves=5)
    h = regular_homotopy(circle(400), wobbly, frames=25, samples=256)
    marks = marks_per_frame(h.points)
    beads = mark_beads(marks, radius=0.02, z=0.1)
    nt = beads.n_tracks
    assert beads.positions.shape == (25, 6 * nt, 3) and beads.faces.shape == (8 * nt, 3)
    # more tracks than marks in the first frame: marks appear along the way
    assert nt > marks.counts[0]
    assert np.array_equal(beads.present.sum(axis=1), marks.counts)
    corners = beads.positions.reshape(25, nt, 6, 3)
    spread = np.ptp(corners, axis=2).max(axis=2)  # (F, T)
    assert np.allclose(spread[beads.present], 0.04, atol=1e-6)
    assert np.all(spread[~beads.present] == 0)
    # each present bead is centred on its frame's mark at the given height
    centres = corners.mean(axis=2)
    for f in (0, 12, 24):
        got = np.sort(centres[f][beads.present[f]][:, :2], axis=0)
        want = np.sort(marks.of_frame(f)[0], axis=0)
        assert np.allclose(got, want, atol=1e-6)
    assert np.allclose(centres[..., 2], 0.1)
    # the signs of present beads add up to the turning number in every frame
    # (Whitney, "On regular closed curves in the plane", 1937: the degree of the tangent map)
    assert np.all((beads.present * beads.signs[None]).sum(axis=1) == h.turning_number)
