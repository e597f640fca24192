"""A bake's plan and its PC2 point cache, without Blender.

The PC2 layout checked here is the format's published layout (common practice): the
12-byte signature b"POINTCACHE2\\0", int32 version 1, int32 number of points, float32 start
frame, float32 sample rate, int32 number of samples, then float32 x, y, z of every point,
sample after sample, all little-endian. The file is parsed here with ``struct`` and
``numpy.frombuffer`` from that description alone, not with the reader under test.
"""

from __future__ import annotations

import os
import struct

import numpy as np
import pytest

from turnabout.baking.pc2 import PointCacheError, read_pc2, write_pc2
from turnabout.baking.plan import (
    CACHE_CHUNK,
    BakeError,
    cache_file_path,
    estimated_bytes,
    key_offsets_for,
    mesh_from_settings,
    plan_bake,
    refuse_if_too_big,
)
from turnabout.eversion import Controls, default_frames, mesh_for
from turnabout.mesh import uniform_sphere_mesh

SMALL = uniform_sphere_mesh(16, 7)


# --------------------------------------------------------------------------- plan


@pytest.mark.parametrize("frames", [2, 3, 14, 15, 97])
@pytest.mark.parametrize("step", [1, 2, 4, 13, 200])
def test_keys_sit_every_step_frames_and_on_the_last_frame(frames, step):
    want = sorted(set(range(0, frames, step)) | {frames - 1})
    got = key_offsets_for(frames, step)
    assert got.dtype == np.int64 and got.tolist() == want


def test_a_plan_stores_times_from_zero_to_one_at_the_key_frames():
    plan = plan_bake(Controls(), 15, 5, 4, SMALL, "SHAPE_KEYS")
    assert plan.key_offsets.tolist() == [0, 4, 8, 12, 14]
    assert np.allclose(plan.times, np.array([0, 4, 8, 12, 14]) / 14)
    assert (plan.times[0], plan.times[-1]) == (0.0, 1.0)
    assert (plan.n_keys, plan.n_vertices, plan.frame_start) == (5, SMALL.n_vertices, 5)


def test_a_point_cache_plan_holds_every_frame_whatever_the_key_step():
    plan = plan_bake(Controls(), 10, 1, 3, SMALL, "POINT_CACHE")
    assert plan.key_step == 1 and plan.key_offsets.tolist() == list(range(10))


def test_a_plan_without_frames_or_mesh_takes_the_eversions_defaults():
    plan = plan_bake(Controls())
    assert plan.frames == default_frames(Controls().strips)
    assert plan.n_vertices == mesh_for(Controls()).n_vertices


@pytest.mark.parametrize(
    "kwargs, message",
    [
        ({"frames": 1}, "frames: must be an integer of at least 2, got 1"),
        ({"frames": 2.5}, "frames: must be an integer of at least 2"),
        ({"frames": True}, "frames: must be an integer"),
        ({"frames": 5, "key_step": 0}, "key step: must be an integer of at least 1, got 0"),
        ({"frames": 5, "mode": "FLIPBOOK"}, "store as: must be SHAPE_KEYS or POINT_CACHE"),
    ],
)
def test_a_bad_frame_layout_is_refused_naming_the_value(kwargs, message):
    with pytest.raises(BakeError, match=message):
        plan_bake(Controls(), mesh=SMALL, **kwargs)


def test_mesh_settings_give_the_core_mesh_and_refuse_too_few_longitudes():
    got = mesh_from_settings(Controls(), 0, 0, "even")
    want = mesh_for(Controls(), spacing="even")
    assert (got.n_lon, got.n_lat) == (want.n_lon, want.n_lat)
    with pytest.raises(BakeError, match="at least 3 longitude samples, got 2 x 5"):
        mesh_from_settings(Controls(), 2, 5)


def test_the_memory_estimate_counts_every_stored_coordinate():
    n_v = SMALL.n_vertices
    keys = plan_bake(Controls(), 40, 1, 3, SMALL, "SHAPE_KEYS")
    # per coordinate: float64 evaluation + float32 copy + Blender's float32 key block
    assert estimated_bytes(keys) == keys.n_keys * n_v * 3 * (8 + 4 + 4)
    cache = plan_bake(Controls(), 40, 1, 1, SMALL, "POINT_CACHE")
    # a point cache holds one chunk of frames at a time
    assert estimated_bytes(cache) == CACHE_CHUNK * n_v * 3 * (8 + 4)
    short = plan_bake(Controls(), 5, 1, 1, SMALL, "POINT_CACHE")
    assert estimated_bytes(short) == 5 * n_v * 3 * (8 + 4)


def test_a_bake_over_the_limit_is_refused_with_the_figure():
    plan = plan_bake(Controls(), 200, 1, 1, SMALL, "SHAPE_KEYS")
    need = estimated_bytes(plan)
    assert refuse_if_too_big(plan, need / 1e6) == need  # exactly at the limit is allowed
    with pytest.raises(BakeError) as err:
        refuse_if_too_big(plan, need / 1e6 * 0.5)
    assert f"about {need / 1e6:.0f} MB" in str(err.value)
    assert f"200 shapes x {SMALL.n_vertices} vertices" in str(err.value)


@pytest.mark.parametrize("name", ["Eversion", "a/../../b", "..", "sph ère:1", ""])
def test_the_cache_file_stays_in_its_folder_whatever_the_object_is_called(tmp_path, name):
    path = cache_file_path(str(tmp_path), name)
    assert os.path.dirname(path) == str(tmp_path)
    assert path.endswith(".pc2") and os.path.basename(path) not in (".pc2", "..pc2")
    assert os.path.realpath(path).startswith(os.path.realpath(tmp_path) + os.sep)


# --------------------------------------------------------------------------- PC2


def _positions(samples=7, points=5):
    rng = np.random.default_rng(3)
    return rng.normal(size=(samples, points, 3)).astype(np.float32)


def test_a_written_cache_follows_the_published_pc2_layout(tmp_path):
    pos = _positions()
    path = tmp_path / "c.pc2"
    write_pc2(path, [pos[:3], pos[3:]], n_points=5, n_samples=7, start=4.0)
    data = path.read_bytes()
    assert len(data) == 32 + 12 * 5 * 7
    sig, version, points, start, rate, samples = struct.unpack("<12siiffi", data[:32])
    assert (sig, version, points, start, rate, samples) == (b"POINTCACHE2\0", 1, 5, 4.0, 1.0, 7)
    body = np.frombuffer(data[32:], "<f4").reshape(7, 5, 3)
    assert np.array_equal(body, pos)


def test_the_reader_gives_back_what_was_written(tmp_path):
    pos = _positions(12, 9)
    path = tmp_path / "c.pc2"
    write_pc2(path, (pos[a : a + 5] for a in range(0, 12, 5)), 9, 12, start=-2.0, rate=0.5)
    got, start, rate = read_pc2(path)
    assert got.dtype == np.float32 and np.array_equal(got, pos)
    assert (start, rate) == (-2.0, 0.5)


def test_same_positions_give_byte_identical_caches(tmp_path):
    pos = _positions()
    write_pc2(tmp_path / "a.pc2", [pos], 5, 7)
    write_pc2(tmp_path / "b.pc2", [pos[:1], pos[1:]], 5, 7)
    assert (tmp_path / "a.pc2").read_bytes() == (tmp_path / "b.pc2").read_bytes()


@pytest.mark.parametrize("count", [6, 8])
def test_a_wrong_sample_count_leaves_no_file(tmp_path, count):
    pos = _positions(count)
    with pytest.raises(PointCacheError, match=f"wrote {count} samples, expected 7"):
        write_pc2(tmp_path / "c.pc2", [pos], 5, 7)
    assert list(tmp_path.iterdir()) == []


def test_a_block_of_the_wrong_shape_leaves_no_file(tmp_path):
    with pytest.raises(PointCacheError, match=r"expected \(k, 5, 3\)"):
        write_pc2(tmp_path / "c.pc2", [_positions(7, 4)], 5, 7)
    assert list(tmp_path.iterdir()) == []


def _header(points, samples, signature=b"POINTCACHE2\0", version=1):
    return signature + struct.pack("<iiffi", version, points, 0.0, 1.0, samples)


@pytest.mark.parametrize(
    "data, message",
    [
        (b"", "not a PC2 file"),
        (b"POINTCACHE2\0\1\0", "not a PC2 file"),
        (_header(2, 1, signature=b"POINTCACHE3\0") + bytes(24), "not a PC2 file"),
        (_header(2, 1, version=2) + bytes(24), "version 2, only 1 is known"),
        (_header(-1, 1), "negative counts"),
        (_header(2, 3) + bytes(24), "promises 3 samples of 2 points"),
        # a header asking for about 12 GB in a 32-byte file: refused from the size alone
        (_header(10**6, 1000), "promises 1000 samples of 1000000 points"),
    ],
)
def test_a_damaged_cache_is_refused_before_anything_is_allocated(tmp_path, data, message):
    path = tmp_path / "bad.pc2"
    path.write_bytes(data)
    with pytest.raises(PointCacheError, match=message):
        read_pc2(path)


def test_a_cache_over_the_read_limit_is_refused(tmp_path):
    path = tmp_path / "c.pc2"
    write_pc2(path, [_positions()], 5, 7)
    with pytest.raises(PointCacheError, match="over the limit of 100"):
        read_pc2(path, max_bytes=100)
