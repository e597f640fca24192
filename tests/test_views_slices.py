"""Latitude bands of the starting sphere, and the camera track that follows one."""

from __future__ import annotations

import math

import numpy as np
import pytest

from turnabout.eversion import DEFAULT_FRAMES, Controls, evaluate, mesh_for
from turnabout.mesh import SphereMesh, uniform_sphere_mesh
from turnabout.views import (
    ViewError,
    band_faces,
    band_track,
    band_vertices,
    latitude_bands,
)

CTL = Controls()
SMALL = uniform_sphere_mesh(8 * 16, 47)


@pytest.fixture(scope="module")
def mesh():
    return mesh_for(CTL)


def test_bands_tile_the_sphere_or_sit_centred_in_their_slices():
    b = latitude_bands(6).bounds
    assert b.shape == (6, 2)
    assert b[0, 0] == -np.pi / 2 and b[-1, 1] == np.pi / 2
    assert np.array_equal(b[1:, 0], b[:-1, 1])
    assert np.allclose(np.diff(b, axis=1), np.pi / 6)
    narrow = latitude_bands(6, width=0.2).bounds
    assert np.allclose(narrow.mean(axis=1), b.mean(axis=1))
    assert np.allclose(np.diff(narrow, axis=1), 0.2)


def test_band_vertices_are_material_and_tile_the_vertices(mesh):
    bands = latitude_bands(5)
    ids = [band_vertices(mesh, bands, j) for j in range(5)]
    both = np.concatenate(ids)
    assert np.array_equal(np.sort(both), np.arange(mesh.n_vertices))
    P0, P1 = evaluate(CTL, [0.0, 1.0], mesh)
    for j, (lo, hi) in enumerate(bands.bounds):
        # on the starting (unit) sphere a vertex's height is sin(latitude)
        z = P0[:, 2]
        expect = np.flatnonzero((z >= np.sin(lo) - 1e-12) & ((z < np.sin(hi) - 1e-12) | (j == 4)))
        assert np.array_equal(ids[j], expect)
        # the same vertices end on the antipodal band: the last frame is the sphere turned
        # inside out by the antipodal map, so the heights run from -sin(hi) to -sin(lo)
        z1 = P1[ids[j], 2]
        assert z1.min() >= -np.sin(hi) - 1e-9 and z1.max() <= -np.sin(lo) + 1e-9
        faces = band_faces(mesh, bands, j)
        assert np.isin(mesh.triangles()[faces], ids[j]).all()
        assert faces.sum() > 0


def _ring_submesh(mesh, ids):
    """The band's rings (and pole) as a mesh of their own: the eversion evaluates latitude
    by latitude, so its positions are the full mesh's positions of the same vertices."""
    n = mesh.n_lon
    rows = np.unique((ids[(ids > 0) & (ids < mesh.n_vertices - 1)] - 1) // n)
    sub = SphereMesh(theta=mesh.theta, lat=mesh.lat[rows])
    keep = np.arange(1, 1 + rows.size * n)
    if ids[0] == 0:
        keep = np.append(0, keep)
    if ids[-1] == mesh.n_vertices - 1:
        keep = np.append(keep, sub.n_vertices - 1)
    full = np.concatenate([[0], 1 + (rows[:, None] * n + np.arange(n)).ravel(),
                           [mesh.n_vertices - 1]])  # fmt: skip
    sub_to_full = full[keep]
    assert np.array_equal(np.sort(sub_to_full), ids)
    return sub, keep


def _image_radius(points, cam, axes):
    """Largest projected radius over focal length of a pinhole camera: (F,)."""
    d = points - cam[:, None, :]
    depth = np.einsum("fkc,fc->fk", d, axes[:, 2])
    x = np.einsum("fkc,fc->fk", d, axes[:, 0])
    y = np.einsum("fkc,fc->fk", d, axes[:, 1])
    assert depth.min() > 0  # every band point in front of the camera
    return (np.hypot(x, y) / depth).max(axis=1)


@pytest.mark.parametrize("which", [0, 2, 3, 5])
def test_the_tracking_camera_keeps_the_band_at_a_steady_size(mesh, which):
    bands = latitude_bands(6)
    ids = band_vertices(mesh, bands, which)
    sub, keep = _ring_submesh(mesh, ids)
    times = np.linspace(0.0, 1.0, DEFAULT_FRAMES)  # the whole default motion
    pos = evaluate(CTL, times, sub)
    full = evaluate(CTL, [times[200]], mesh)[0]
    assert np.array_equal(np.sort(pos[200, keep], axis=0), np.sort(full[ids], axis=0))
    track = band_track(pos, keep)
    F = times.size
    assert track.centroid.shape == (F, 3) and track.extent.shape == (F,)
    assert track.axes.shape == (F, 3, 3)
    a = track.axes
    assert np.allclose(a @ a.transpose(0, 2, 1), np.eye(3), atol=1e-12)
    assert np.allclose(a, a[0]) and np.allclose(a[:, 2], [0, 0, -1])
    # right x screen-up points back at the camera (a right-handed camera frame)
    assert np.allclose(np.cross(a[:, 0], a[:, 1]), -a[:, 2])
    half_fov = math.radians(20.0)
    cam = track.camera_locations(half_fov, margin=1.2)
    size = _image_radius(pos[:, keep], cam, a)
    assert np.abs(size / size[0] - 1).max() < 0.10
    assert np.isclose(size[0], math.tan(half_fov) / 1.2)
    # the extent is the largest distance from the centroid
    ext = np.linalg.norm(pos[:, keep] - track.centroid[:, None], axis=-1).max(axis=1)
    assert np.allclose(track.extent, ext)


def test_a_tilted_up_axis_and_an_anisotropic_band_get_principal_screen_axes():
    rng = np.random.default_rng(7)
    pts = rng.normal(size=(3, 200, 3)) * [3.0, 1.0, 0.2]  # long along x, flat in z
    up = np.array([0.0, 0.0, 2.0])
    track = band_track(pts, np.arange(200), up=up)
    right = track.axes[0, 0]
    assert abs(right[0]) > 0.95  # the principal direction of the first frame
    cam = track.camera_locations(math.radians(30.0))
    size = _image_radius(pts, cam, track.axes)
    assert np.allclose(size, math.tan(math.radians(30.0)) / 1.1)


@pytest.mark.parametrize(
    "call, option, allowed",
    [
        (lambda: latitude_bands(0), "count", "from 1 to 90"),
        (lambda: latitude_bands(91), "count", "from 1 to 90"),
        (lambda: latitude_bands(2.5), "count", "from 1 to 90"),
        (lambda: latitude_bands(4, width=0.0), "width", "(0, 0.785398]"),
        (lambda: latitude_bands(4, width=1.0), "width", "(0, 0.785398]"),
        (lambda: latitude_bands(4, width=float("nan")), "width", "(0, 0.785398]"),
        (lambda: band_vertices(SMALL, latitude_bands(4), 4), "which", "0 to 3"),
        (lambda: band_faces(SMALL, latitude_bands(4), -1), "which", "0 to 3"),
        (lambda: band_vertices(SMALL, latitude_bands(5, width=1e-4), 1), "width", "widen"),
        (lambda: band_track(np.zeros((2, 5, 3)), [0, 1], up=(0, 0, 0)), "up", "nonzero"),
        (lambda: band_track(np.zeros((2, 5, 3)), [0, 7]), "vertex_ids", "0 .. 4"),
        (lambda: band_track(np.ones((2, 5, 3)), [0]).camera_locations(2.0), "half_fov", "pi/2"),
    ],
)
def test_bad_band_options_are_refused_with_the_allowed_range(call, option, allowed):
    with pytest.raises(ViewError) as exc:
        call()
    assert exc.value.option == option and allowed in str(exc.value)
