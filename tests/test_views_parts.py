"""Parts of the eversion's surface, and the dihedral symmetry that the mesh shares."""

from __future__ import annotations

import numpy as np
import pytest

from turnabout.eversion import Controls, evaluate, mesh_for
from turnabout.eversion.construction import WAVE_END_LAT
from turnabout.mesh import uniform_sphere_mesh
from turnabout.views import (
    ViewError,
    extract,
    surface_parts,
    symmetry_face_maps,
    symmetry_matrices,
    symmetry_vertex_maps,
)

CTL = Controls()
N = CTL.strips
# 24 frames spanning the motion, plus the middle
TIMES = np.append(np.linspace(0.0, 1.0, 24), 0.5)


@pytest.fixture(scope="module")
def mesh():
    return mesh_for(CTL)


@pytest.fixture(scope="module")
def frames(mesh):
    return evaluate(CTL, TIMES, mesh)


@pytest.fixture(scope="module")
def maps(mesh):
    return symmetry_vertex_maps(mesh, N), symmetry_face_maps(mesh, N)


def _is_permutation(rows):
    return all(np.array_equal(np.sort(r), np.arange(r.size)) for r in rows)


def test_the_default_mesh_counts_are_kept():
    m = mesh_for(CTL)
    assert (m.n_lon // N, m.n_lat, m.n_vertices) == (60, 98, 47042)


def test_symmetry_matrices_form_the_dihedral_group():
    # D_n: n turns and n half-turns, closed under products, every half-turn of order 2
    # (the dihedral group of order 2n; any group theory text)
    M = symmetry_matrices(N)
    assert M.shape == (2 * N, 3, 3)
    assert np.allclose(M @ M.transpose(0, 2, 1), np.eye(3), atol=1e-14)
    assert np.allclose(np.linalg.det(M), 1.0)
    for h in M[N:]:
        assert np.allclose(h @ h, np.eye(3), atol=1e-14)
        assert np.isclose(np.trace(h), -1.0)  # a rotation by pi: trace 1 + 2 cos(pi)
    flat = M.reshape(2 * N, 9)
    for a in M:
        for b in M[[1, N, N + 3]]:
            assert np.abs(flat - (a @ b).ravel()).max(axis=1).min() < 1e-13


def test_the_default_mesh_maps_onto_itself_in_every_frame(mesh, frames, maps):
    vmap, fmap = maps
    assert vmap.shape == (2 * N, mesh.n_vertices) and fmap.shape[0] == 2 * N
    assert _is_permutation(vmap) and _is_permutation(fmap)
    M = symmetry_matrices(N)
    for g in range(2 * N):
        err = np.abs(frames[:, vmap[g]] - frames @ M[g].T).max()
        assert err < 1e-9, (g, err)


def test_triangles_map_to_triangles_with_the_same_diagonals(mesh, maps):
    vmap, fmap = maps
    faces = mesh.triangles()
    for g in (1, N, N + 5):
        image = np.sort(vmap[g][faces], axis=1)
        assert np.array_equal(image, np.sort(faces[fmap[g]], axis=1))


@pytest.mark.parametrize(
    "kwargs",
    [
        {"spacing": "even"},
        {"spacing": "even", "n_lon": 8 * 33, "n_lat": 40},
        {"n_lon": 8 * 41, "n_lat": 81},
        {"n_lon": 8 * 40, "n_lat": 80},
    ],
)
def test_even_and_asked_for_meshes_share_the_symmetry(kwargs):
    m = mesh_for(CTL, **kwargs)
    vmap = symmetry_vertex_maps(m, N)
    fmap = symmetry_face_maps(m, N)
    assert _is_permutation(vmap) and _is_permutation(fmap)
    P = evaluate(CTL, [0.0, 0.5, 0.8], m)
    M = symmetry_matrices(N)
    for g in (1, N, 2 * N - 1):
        assert np.abs(P[:, vmap[g]] - P @ M[g].T).max() < 1e-9


def test_a_mesh_without_the_half_turn_is_refused():
    m = uniform_sphere_mesh(8 * 9, 31)  # odd count per strip starting at theta = 0
    with pytest.raises(ViewError) as exc:
        symmetry_vertex_maps(m, 8)
    assert exc.value.option == "mesh"
    with pytest.raises(ViewError, match="multiple of strips"):
        symmetry_vertex_maps(uniform_sphere_mesh(60, 31), 8)


def test_fundamental_piece_tiles_the_surface_in_every_frame(mesh, frames, maps):
    vmap, fmap = maps
    parts = surface_parts(mesh, N)
    piece = parts.fundamental_piece()
    faces = mesh.triangles()
    m = faces.shape[0]
    assert piece.sum() * 2 * N == m
    hits = np.bincount(fmap[:, piece].ravel(), minlength=m)
    assert hits.min() == 1 and hits.max() == 1
    M = symmetry_matrices(N)
    corners = faces[piece]
    for g in range(2 * N):
        images = faces[fmap[g][piece]]
        assert np.array_equal(np.sort(vmap[g][corners], 1), np.sort(images, 1))
        # the image faces' corners sit where the symmetry puts the piece's corners
        err = np.abs(frames[:, vmap[g][corners]] - frames[:, corners] @ M[g].T).max()
        assert err < 1e-9


def test_parts_partition_the_faces_and_the_symmetry_permutes_them(mesh, maps):
    _, fmap = maps
    p = surface_parts(mesh, N)
    masks = [p.guide(k) for k in range(N)] + [p.wave(k) for k in range(N)]
    masks += [p.cap("south"), p.cap("north")]
    count = np.sum(masks, axis=0)
    assert count.min() == 1 and count.max() == 1
    assert all(m.any() for m in masks)
    everything = p.select(range(N), range(N), ("south", "north"))
    assert everything.all() and everything.shape == count.shape
    lab = p.label
    # the turn by one strip: guide k -> guide k + 1, wave k -> wave k + 1, caps fixed
    turned = np.where(lab < 2 * N, (lab % N + 1) % N + (lab >= N) * N, lab)
    assert np.array_equal(lab[fmap[1]], turned)
    # the half-turn H_0 (theta -> P/2 - theta, lat -> -lat): guide k <-> wave -k, caps swap
    swapped = np.where(lab < N, N + (-lab) % N, (-(lab - N)) % N)
    swapped = np.where(lab >= 2 * N, 4 * N + 1 - lab, swapped)
    assert np.array_equal(lab[fmap[N]], swapped)


def test_labels_follow_the_definition_on_the_round_sphere(mesh, frames):
    # independent of the parameter bookkeeping: the azimuth and height of each face's centre
    # on the starting unit sphere, away from the parts' edges by more than a face
    p = surface_parts(mesh, N)
    c = frames[0][mesh.triangles()].mean(axis=1)
    phi = np.arctan2(c[:, 1], c[:, 0])
    lat = np.arctan2(c[:, 2], np.hypot(c[:, 0], c[:, 1]))
    period = 2 * np.pi / N
    u = (phi + period / 4) / period
    k = np.floor(u).astype(int) % N
    guide = (u - np.floor(u)) < 0.5
    expect = np.where(guide, k, N + k)
    expect = np.where(lat < -WAVE_END_LAT, 2 * N, np.where(lat > WAVE_END_LAT, 2 * N + 1, expect))
    gap_t = np.diff(mesh.theta).max()
    gap_l = np.diff(mesh.lat).max()
    edge_t = np.abs(((u * 2) % 1 + 0.5) % 1 - 0.5) * period / 2  # to the nearest strip edge
    clear = (edge_t > gap_t) & (np.abs(np.abs(lat) - WAVE_END_LAT) > gap_l)
    clear |= np.abs(lat) > WAVE_END_LAT + gap_l
    assert clear.mean() > 0.8
    assert np.array_equal(p.label[clear], expect[clear])


def _areas(P, faces):
    a, b, c = P[faces[:, 0]], P[faces[:, 1]], P[faces[:, 2]]
    return 0.5 * np.linalg.norm(np.cross(b - a, c - a), axis=1)


def test_part_areas_on_the_round_sphere_are_archimedes_zones(mesh, frames):
    # Archimedes (On the Sphere and Cylinder, I, 42-43; the hat-box theorem): a zone of the
    # unit sphere between heights z0 < z1 has area 2 pi (z1 - z0). The faces are inscribed
    # (a little smaller: the tolerance 2e-3), and a part's edge follows the mesh, within the
    # ring band that holds the latitude WAVE_END_LAT.
    p = surface_parts(mesh, N)
    area = _areas(frames[0], mesh.triangles())
    j = int(np.searchsorted(mesh.lat, -WAVE_END_LAT))
    lo, hi = np.sin(mesh.lat[j - 1]), np.sin(mesh.lat[j])  # the band around -WAVE_END_LAT
    hat_box = 2 * np.pi * (1 - np.sin(WAVE_END_LAT))
    assert 2 * np.pi * (1 + lo) <= hat_box <= 2 * np.pi * (1 + hi)
    for name in ("south", "north"):
        a = area[p.cap(name)].sum()
        assert 2 * np.pi * (1 + lo) * (1 - 2e-3) < a < 2 * np.pi * (1 + hi)
        assert abs(a - hat_box) < 2 * np.pi * (hi - lo)
    inner, outer = 4 * np.pi * -hi / (2 * N), 4 * np.pi * -lo / (2 * N)
    exact = 4 * np.pi * np.sin(WAVE_END_LAT) / (2 * N)  # half a period of the waved zone
    for k in range(N):
        for m in (p.guide(k), p.wave(k)):
            a = area[m].sum()
            assert inner * (1 - 2e-3) < a < outer
            assert abs(a - exact) < 4 * np.pi * (hi - lo) / (2 * N)


def test_extract_renumbers_vertices_for_one_frame_and_for_many(mesh, frames):
    p = surface_parts(mesh, N)
    faces = mesh.triangles()
    mask = p.guide(3)
    sub, sub_faces, ids = extract(frames[0], faces, mask)
    assert sub.shape == (ids.size, 3) and sub_faces.dtype == np.int32
    assert np.array_equal(sub[sub_faces], frames[0][faces[mask]])
    many, many_faces, ids2 = extract(frames, faces, mask)
    assert many.shape == (frames.shape[0], ids.size, 3)
    assert np.array_equal(many_faces, sub_faces) and np.array_equal(ids, ids2)
    assert np.array_equal(many[:, many_faces], frames[:, faces[mask]])
    assert sub_faces.max() == ids.size - 1 and np.unique(sub_faces).size == ids.size


@pytest.mark.parametrize(
    "call, option, allowed",
    [
        (lambda p: p.select(guides=[8]), "guides", "0 to 7"),
        (lambda p: p.select(waves=[-1]), "waves", "0 to 7"),
        (lambda p: p.wave(2.0), "waves", "0 to 7"),
        (lambda p: p.select(caps=["east"]), "caps", "'south' or 'north'"),
        (lambda p: p.cap("up"), "caps", "'south' or 'north'"),
    ],
)
def test_bad_part_names_are_refused_with_the_allowed_range(call, option, allowed):
    p = surface_parts(uniform_sphere_mesh(8 * 16, 31), 8)
    with pytest.raises(ViewError) as exc:
        call(p)
    assert exc.value.option == option and allowed in str(exc.value)


def test_bad_strip_count_and_mask_are_refused():
    m = uniform_sphere_mesh(8 * 16, 31)
    with pytest.raises(ViewError, match="strips: must be an integer from 8 to 16"):
        surface_parts(m, 3)
    with pytest.raises(ViewError, match="face_mask"):
        extract(np.zeros((m.n_vertices, 3)), m.triangles(), np.ones(5, bool))
