"""Mesh sequence readers and writers: round trips, determinism, and untrusted input."""

from __future__ import annotations

import time
import zipfile

import numpy as np
import pytest
import surfaces
from references import require

from turnabout.mesh import round_sphere_positions, uniform_sphere_mesh
from turnabout.meshfiles import read_sequence
from turnabout.meshfiles.model import MeshSequenceError, ReadLimits
from turnabout.meshfiles.npz import write_npz
from turnabout.meshfiles.obj import write_obj_sequence
from turnabout.meshfiles.ply import write_ply_sequence


@pytest.fixture(scope="module")
def animated():
    mesh = uniform_sphere_mesh(12, 6)
    p0 = round_sphere_positions(mesh)
    scale = np.linspace(1.0, 1.3, 4)
    positions = (p0[None] * scale[:, None, None]).astype(np.float32)
    return positions, mesh.triangles(), mesh.uv(), np.linspace(0.0, 1.0, 4), mesh


def test_npz_round_trip_keeps_every_array(tmp_path, animated):
    pos, faces, uv, times, _ = animated
    path = write_npz(tmp_path / "a.npz", pos, faces, uv=uv, times=times)
    seq = read_sequence(path)
    assert seq.positions.dtype == np.float32 and seq.faces.dtype == np.int32
    assert np.array_equal(seq.positions, pos)
    assert np.array_equal(seq.faces, faces)
    assert np.array_equal(seq.uv, uv)
    assert np.array_equal(seq.times, times)


def test_npz_output_is_byte_identical_for_the_same_inputs(tmp_path, animated):
    pos, faces, uv, times, _ = animated
    a = write_npz(tmp_path / "a.npz", pos, faces, uv=uv, times=times)
    time.sleep(2.1)  # zip timestamps have 2 s resolution: a clock-based stamp would differ
    b = write_npz(tmp_path / "b.npz", pos.astype(np.float64), faces, uv=uv, times=times)
    assert a.read_bytes() == b.read_bytes()
    with zipfile.ZipFile(a) as zf:
        assert [i.filename for i in zf.infolist()] == [
            "positions.npy", "faces.npy", "uv.npy", "times.npy"
        ]  # fmt: skip


def test_npz_is_readable_by_numpy_without_pickle(tmp_path, animated):
    pos, faces, *_ = animated
    path = write_npz(tmp_path / "a.npz", pos, faces)
    with np.load(path, allow_pickle=False) as data:
        assert sorted(data.files) == ["faces", "positions"]
        assert np.array_equal(data["positions"], pos)


@pytest.mark.parametrize("with_uv", [False, True])
def test_obj_sequence_round_trip(tmp_path, animated, with_uv):
    pos, faces, uv, _, _ = animated
    paths = write_obj_sequence(tmp_path / "obj", pos, faces, uv=uv if with_uv else None)
    assert [p.name for p in paths] == [f"frame_{i:04d}.obj" for i in range(4)]
    seq = read_sequence(tmp_path / "obj")
    assert np.array_equal(seq.positions, pos)  # 9 significant digits round-trip float32
    assert np.array_equal(seq.faces, faces)
    assert (seq.uv is not None) == with_uv
    if with_uv:
        assert np.array_equal(seq.uv, uv)


@pytest.mark.parametrize("binary", [True, False])
def test_ply_sequence_round_trip_with_polygons(tmp_path, animated, binary):
    pos, _, _, _, mesh = animated
    quads, tris = mesh.polygons()
    polys = list(quads) + list(tris)
    write_ply_sequence(tmp_path / "ply", pos, polys, binary=binary)
    seq = read_sequence(tmp_path / "ply")
    assert seq.faces is None  # quads are kept as polygons
    assert len(seq.polygons) == len(polys)
    assert all(np.array_equal(a, b) for a, b in zip(seq.polygons, polys, strict=True))
    assert np.array_equal(seq.positions, pos)
    assert seq.triangles().shape == (2 * len(quads) + len(tris), 3)


def test_written_files_are_read_the_same_by_trimesh(tmp_path, animated):
    trimesh = require("trimesh")
    pos, faces, *_ = animated
    ply = write_ply_sequence(tmp_path / "ply", pos, faces)[2]
    obj = write_obj_sequence(tmp_path / "obj", pos, faces)[2]
    for path in (ply, obj):
        m = trimesh.load(path, process=False)
        assert np.allclose(m.vertices, pos[2], atol=1e-6)
        assert np.array_equal(m.faces, faces)


def test_reads_a_binary_ply_written_by_trimesh(tmp_path, animated):
    trimesh = require("trimesh")
    pos, faces, *_ = animated
    path = tmp_path / "ext" / "f_1.ply"
    path.parent.mkdir()
    trimesh.Trimesh(pos[1], faces, process=False).export(path)
    seq = read_sequence(path.parent)
    assert np.allclose(seq.positions[0], pos[1])
    assert np.array_equal(seq.faces, faces)


def test_writers_leave_no_temporary_files(tmp_path, animated):
    pos, faces, *_ = animated
    write_npz(tmp_path / "a.npz", pos, faces)
    write_ply_sequence(tmp_path, pos, faces)
    assert not [p for p in tmp_path.iterdir() if p.name.endswith(".part")]


def test_bad_input_to_a_writer_creates_no_file(tmp_path, animated):
    pos, faces, *_ = animated
    bad = pos.copy()
    bad[1, 3, 0] = np.nan
    with pytest.raises(MeshSequenceError, match="NaN"):
        write_npz(tmp_path / "a.npz", bad, faces)
    assert list(tmp_path.iterdir()) == []


def test_truncated_npz_is_a_clear_error(tmp_path, animated):
    pos, faces, *_ = animated
    path = write_npz(tmp_path / "a.npz", pos, faces)
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])
    with pytest.raises(MeshSequenceError, match="truncated"):
        read_sequence(path)


def test_empty_file_is_a_clear_error(tmp_path):
    for name in ("a.npz", "a.obj", "a.ply"):
        (tmp_path / name).write_bytes(b"")
        with pytest.raises(MeshSequenceError, match="empty"):
            read_sequence(tmp_path / name)


def test_npz_with_object_arrays_is_refused(tmp_path):
    path = tmp_path / "evil.npz"
    np.savez(path, positions=np.array([object()], dtype=object), faces=np.zeros((1, 3), int))
    with pytest.raises(MeshSequenceError, match="Python objects"):
        read_sequence(path)


def test_npz_missing_arrays_names_what_is_needed(tmp_path):
    path = tmp_path / "x.npz"
    np.savez(path, verts=np.zeros((3, 3)))
    with pytest.raises(MeshSequenceError, match="positions"):
        read_sequence(path)


def test_oversized_header_is_refused_before_allocating(tmp_path, animated):
    pos, faces, *_ = animated
    path = write_npz(tmp_path / "a.npz", pos, faces)
    limits = ReadLimits(max_vertices=10)
    with pytest.raises(MeshSequenceError, match="exceeds the limits"):
        read_sequence(path, limits=limits)


def test_faces_past_the_vertices_are_refused(tmp_path, animated):
    pos, faces, *_ = animated
    f = faces.copy()
    f[5, 1] = pos.shape[1] + 7
    path = tmp_path / "a.npz"
    np.savez(path, positions=pos, faces=f)
    with pytest.raises(MeshSequenceError, match="vertex index"):
        read_sequence(path)


def test_obj_frames_with_different_topology_are_refused(tmp_path, animated):
    pos, faces, *_ = animated
    paths = write_obj_sequence(tmp_path, pos, faces)
    text = paths[2].read_text().splitlines()
    last_face = max(i for i, line in enumerate(text) if line.startswith("f "))
    text[last_face] = "f 1 2 3"
    paths[2].write_text("\n".join(text) + "\n")
    with pytest.raises(MeshSequenceError, match="same topology"):
        read_sequence(tmp_path)


def test_truncated_binary_ply_is_a_clear_error(tmp_path, animated):
    pos, faces, *_ = animated
    path = write_ply_sequence(tmp_path, pos[:1], faces)[0]
    data = path.read_bytes()
    path.write_bytes(data[:-40])
    with pytest.raises(MeshSequenceError, match="truncated|cut off"):
        read_sequence(path)


def test_unknown_extension_lists_the_allowed_ones(tmp_path):
    (tmp_path / "a.stl").write_bytes(b"solid")
    with pytest.raises(MeshSequenceError, match=r"\.npz"):
        read_sequence(tmp_path / "a.stl")


def test_welding_merges_seam_duplicates_only(tmp_path):
    # a sphere with a duplicated seam column (as UV-unwrapped exports have)
    n_lon, n_lat = 10, 6
    frames, polys = surfaces.sphere_with_a_seam(n_lon, n_lat, exact_copies=False)
    write_obj_sequence(tmp_path, frames, polys)
    welded = read_sequence(tmp_path, weld=True)
    assert welded.n_vertices == n_lon * n_lat + 2  # exactly the seam column merged
    from turnabout.check import topology_report

    rep = topology_report(welded.triangles(), welded.n_vertices)
    assert rep.is_manifold and rep.euler_characteristic == 2
    unwelded = read_sequence(tmp_path)
    assert not topology_report(unwelded.triangles(), unwelded.n_vertices).closed
