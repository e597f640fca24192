"""The numbers behind the view rigs, checked against scipy's rotations and pinhole geometry."""

from __future__ import annotations

import numpy as np
import pytest
from references import require

from turnabout.views import rig_math
from turnabout.views.rig_math import RigError

Rotation = require("scipy.spatial.transform").Rotation


def _axes_of(matrices):
    """View axes (rows right, up, view) of cameras with these rotation matrices: a camera
    looks along its local -Z with local +X right and +Y up (Blender's convention)."""
    return np.stack([matrices[:, :, 0], matrices[:, :, 1], -matrices[:, :, 2]], axis=1)


def test_quaternions_match_scipy_for_random_camera_orientations():
    rots = Rotation.random(200, random_state=7)
    q = rig_math.quaternions_from_axes(_axes_of(rots.as_matrix()))
    want = rots.as_quat()[:, [3, 0, 1, 2]]  # scipy gives (x, y, z, w)
    dots = np.abs(np.einsum("fi,fi->f", q, want))
    assert np.allclose(dots, 1.0, atol=1e-12)
    assert np.allclose(
        Rotation.from_quat(q[:, [1, 2, 3, 0]]).as_matrix(), rots.as_matrix(), atol=1e-12
    )


def test_quaternions_stay_on_one_side_frame_to_frame():
    # a slow turn of three full revolutions: q and -q alternate unless made continuous
    angles = np.linspace(0, 6 * np.pi, 400)
    axis = np.array([0.3, 0.5, 0.8]) / np.linalg.norm([0.3, 0.5, 0.8])
    rots = Rotation.from_rotvec(np.outer(angles, axis))
    q = rig_math.quaternions_from_axes(_axes_of(rots.as_matrix()))
    assert np.all(np.einsum("fi,fi->f", q[1:], q[:-1]) > 0.99)


def test_a_left_handed_frame_is_refused():
    axes = np.array([[[1.0, 0, 0], [0, 1, 0], [0, 0, 1]]])  # right x up = +view
    with pytest.raises(RigError, match="right-handed"):
        rig_math.quaternions_from_axes(axes)


@pytest.mark.parametrize("up", [(0, 0, 1), (0, 0, -1), (1, 2, 3), (0, 1, 0), (-1, 0, 0.001)])
def test_rotation_z_to_up_takes_z_onto_up(up):
    e = rig_math.rotation_z_to(up)
    got = Rotation.from_euler("xyz", e).apply([0, 0, 1])  # Blender's XYZ Euler order
    assert np.allclose(got, np.asarray(up, float) / np.linalg.norm(up), atol=1e-12)


@pytest.mark.parametrize("up", [(0, 0, 1), (0, 1, 0), (0.2, -0.3, 0.9)])
def test_side_view_frames_the_ball_from_the_side(up):
    centre, radius, half = np.array([0.3, -0.2, 0.5]), 1.7, 0.27
    eye, q = rig_math.side_view(centre, radius, up, half, elevation=0.3, margin=1.1)
    u = np.asarray(up, float) / np.linalg.norm(up)
    to_centre = centre - eye
    d = np.linalg.norm(to_centre)
    # the ball's silhouette subtends asin(r / d) (pinhole camera): the margin leaves room
    assert np.isclose(np.arcsin(radius / d), np.arcsin(np.sin(half) / 1.1))
    assert np.isclose(np.arcsin(np.dot(-to_centre / d, u)), 0.3)  # raised by the elevation
    m = Rotation.from_quat(q[[1, 2, 3, 0]]).as_matrix()
    assert np.allclose(-m[:, 2], to_centre / d)  # looks at the centre
    assert np.dot(m[:, 1], u) > 0.9  # image up is the scene's up


def test_half_field_of_view_of_a_50mm_lens_on_a_4_by_3_frame():
    # pinhole camera, 36 mm across the long side: 2 atan(18 / 50) = 39.60 deg across and
    # 2 atan(13.5 / 50) = 30.22 deg up a 4:3 frame
    half = rig_math.half_fov_of_short_side(50.0, 36.0, 640, 480)
    assert np.degrees(2 * half) == pytest.approx(30.22, abs=0.01)
    assert rig_math.half_fov_of_short_side(50.0, 36.0, 480, 640) == pytest.approx(half)


def test_face_patch_renumbers_the_picked_faces():
    rng = np.random.default_rng(3)
    tris = rng.integers(0, 50, size=(80, 3))
    mask = rng.random(80) < 0.3
    faces, ids = rig_math.face_patch(tris, mask)
    assert np.array_equal(ids[faces], tris[mask])
    assert np.array_equal(ids, np.unique(tris[mask]))
    with pytest.raises(RigError, match=r"\(80,\) mask"):
        rig_math.face_patch(tris, mask[:-1])


def test_marker_table_shifts_frames_and_checks_kinds():
    co, frame, kind, ids = rig_math.marker_table(
        np.array([0, 0, 3]), np.array([1, 3, 2]), np.arange(9.0).reshape(3, 3), 10
    )
    assert co.dtype == np.float32 and co.tolist() == list(np.arange(9.0))
    assert frame.tolist() == [10, 10, 13] and kind.tolist() == [1, 3, 2]
    assert ids.tolist() == [0, 1, 2]
    with pytest.raises(RigError, match="kind must be one of 1, 2, 3, got 7"):
        rig_math.marker_table(np.array([0]), np.array([7]), np.zeros((1, 3)), 1)
    with pytest.raises(RigError, match="matching lengths"):
        rig_math.marker_table(np.array([0, 1]), np.array([1]), np.zeros((2, 3)), 1)


def test_count_keys_start_at_the_first_frame():
    frames, values = rig_math.count_keys(np.array([1, 1, -1, 1]), 5)
    assert frames.tolist() == [5, 6, 7, 8] and values.tolist() == [1, 1, -1, 1]


@pytest.mark.parametrize("up", [(0, 0, 0), (np.nan, 0, 1), (1, 2)])
def test_bad_up_is_refused(up):
    with pytest.raises(RigError, match="up: must be"):
        rig_math.unit_up(up)


@pytest.mark.parametrize("value", [0, -1, np.inf, "x", 2.0])
def test_positive_names_the_option_and_the_range(value):
    with pytest.raises(RigError, match=r"glyph size: must be"):
        rig_math.positive("glyph size", value, 1.0)


def test_text_corner_is_inside_the_frame_at_the_depth():
    corners = np.array(
        [[1.0, 0.75, -2.0], [1.0, -0.75, -2.0], [-1.0, -0.75, -2.0], [-1.0, 0.75, -2.0]]
    )
    origin, height = rig_math.text_corner(corners, 0.5)
    assert origin[2] == -0.5
    assert -0.25 < origin[0] < 0 and -0.1875 < origin[1] < 0  # lower-left quarter at z=-0.5
    assert height == pytest.approx(0.375 / 12)


def test_blend_keys_is_linear_between_stored_frames():
    shapes = np.array([[[0.0, 0, 0]], [[4.0, 0, 0]], [[4.0, 8, 0]]])
    got = rig_math.blend_keys(shapes, np.array([0, 4, 6]), 7)
    assert got[:, 0, 0].tolist() == [0, 1, 2, 3, 4, 4, 4]
    assert got[:, 0, 1].tolist() == [0, 0, 0, 0, 0, 4, 8]


def test_read_pc2_reads_what_the_layout_says_and_checks_sizes(tmp_path):
    # PC2 layout (common practice): signature, version, points, start, rate, samples, data
    data = np.arange(2 * 3 * 3, dtype="<f4").reshape(2, 3, 3)
    path = tmp_path / "x.pc2"
    head = b"POINTCACHE2\0" + np.array([1, 3], "<i4").tobytes()
    head += np.array([0.0, 1.0], "<f4").tobytes() + np.array([2], "<i4").tobytes()
    path.write_bytes(head + data.tobytes())
    assert np.array_equal(rig_math.read_pc2(str(path), 3, 2), data)
    with pytest.raises(RigError, match="holds 2 x 3 points, expected 2 x 4"):
        rig_math.read_pc2(str(path), 4, 2)
    path.write_bytes(b"NOTACACHE" + bytes(40))
    with pytest.raises(RigError, match="not a PC2 file"):
        rig_math.read_pc2(str(path), 3, 2)


def test_cutaway_keeps_every_band_point_and_cuts_above_it():
    rng = np.random.default_rng(5)
    heights = rng.uniform(-0.4, 0.3, size=(6, 50))  # band points above the centroid
    d = rng.uniform(2.0, 5.0, size=6)  # camera above the centroid
    near = rig_math.cutaway_distances(d, heights.max(axis=1), 0.01)
    depth = d[:, None] - heights  # how far in front of the camera each band point is
    assert np.all(depth.min(axis=1) > near)
    assert np.allclose(depth.min(axis=1) - near, 0.01)
    assert np.all(rig_math.cutaway_distances(d, d, 0.0) == 0.02 * d)  # never at the camera


def test_colours_and_angles_are_checked():
    assert rig_math.colour_rgba("colour", (1, 0.5, 0)) == (1.0, 0.5, 0.0, 1.0)
    with pytest.raises(RigError, match=r"colour: must be 3 or 4 numbers from 0 to 1"):
        rig_math.colour_rgba("colour", (2, 0, 0))
    assert rig_math.angle("elevation", 0.3, np.pi / 2) == 0.3
    with pytest.raises(RigError, match="elevation: must be an angle in radians"):
        rig_math.angle("elevation", 2.0, np.pi / 2)
