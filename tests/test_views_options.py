"""The views' option syntax (shared by the sidebar and ``turnabout scene``), without Blender."""

from __future__ import annotations

import argparse
import importlib.util
import os
import sys

import numpy as np
import pytest

REPO = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def _options():
    """The add-on's option module, loaded by path (it needs no Blender)."""
    spec = importlib.util.spec_from_file_location(
        "turnabout_view_options", os.path.join(REPO, "addon", "view_options.py")
    )
    mod = importlib.util.module_from_spec(spec)
    sys.modules.setdefault(spec.name, mod)
    spec.loader.exec_module(mod)
    return mod


vopt = _options()


def test_parts_words_pick_labels_and_tiles_by_the_label_layout():
    n = 8  # labels: guide k -> k, wave k -> n + k, south cap 2n, north cap 2n + 1
    c = vopt.parse_parts("guide:0,2-3 wave:1 caps:north", n)
    assert np.flatnonzero(c.parts).tolist() == [0, 2, 3, n + 1, 2 * n + 1]
    assert c.tiles.all()
    c = vopt.parse_parts(["tile:1,15"], n)
    assert c.parts.all() and np.flatnonzero(c.tiles).tolist() == [1, 15]
    assert vopt.parse_parts("tile", n).tiles.sum() == 1
    assert vopt.parse_parts("caps", n).parts.sum() == 2
    assert vopt.parse_parts("all", n).parts.all()
    label = np.array([0, 1, 2 * n + 1])
    tile = np.array([0, 1, 15])
    assert vopt.parse_parts("guide:0 caps", n).keeps(label, tile).tolist() == [True, False, True]


@pytest.mark.parametrize(
    "text, message",
    [
        ("guide:8", "guide index 8 is out of range; this eversion has indices 0-7"),
        ("wave:3-1", "is empty"),
        ("wave:x", "cannot read 'x'"),
        ("caps:up", "unknown cap 'up'"),
        ("tile:16", "indices 0-15"),
        ("all:1", "takes no indices"),
        ("ribbon", "unknown word 'ribbon'"),
        ("", "give at least one"),
    ],
)
def test_bad_parts_words_name_the_option_and_what_is_allowed(text, message):
    with pytest.raises(vopt.ViewOptionError) as err:
        vopt.parse_parts(text, 8, "--parts")
    assert str(err.value).startswith("--parts: ") and message in str(err.value)


def test_other_view_values():
    assert vopt.parse_reveal("band:12") == ("band", 12)
    assert vopt.parse_reveal("part") == ("part", None)
    assert vopt.parse_vector("0,0,2") == (0.0, 0.0, 1.0)
    for bad in ("0,0,0", "nan,0,1", "1,2"):
        with pytest.raises(vopt.ViewOptionError):
            vopt.parse_vector(bad)
    assert vopt.parse_frame_pair("2-5", 1, 9, "--reveal-frames") == (2, 5)
    with pytest.raises(vopt.ViewOptionError):
        vopt.parse_frame_pair("5-5", 1, 9, "--reveal-frames")


def test_command_line_views_are_checked_together():
    p = argparse.ArgumentParser()
    p.add_argument("--strips", type=int, default=8)
    p.add_argument("--frames", type=int, default=24)
    p.add_argument("--start", type=int, default=1)
    vopt.add_view_options(p)
    req = vopt.read_view_options(
        p.parse_args(["--parts", "guide:0,1", "caps", "--reveal", "band", "--slices", "4"])
    )
    assert req.parts.text == "guide:0,1 caps" and req.reveal == ("band", None)
    assert req.slices == 4 and req.any
    assert not vopt.read_view_options(p.parse_args([])).any
    with pytest.raises(vopt.ViewOptionError, match="--reveal-frames: needs 1 <= A < B <= 24"):
        vopt.read_view_options(p.parse_args(["--reveal", "part", "--reveal-frames", "3-30"]))
    with pytest.raises(vopt.ViewOptionError, match="--slice / --slice-width: need --slices"):
        vopt.read_view_options(p.parse_args(["--slice", "2"]))


def test_polygon_pairs_follow_the_core_face_order():
    """The add-on's mesh lists quads ring by ring, then the pole fans (``polygons()``); each
    quad's pair must be the core's triangles (a, b, c) and (a, c, d) of that quad."""
    from turnabout.mesh import uniform_sphere_mesh

    mesh = uniform_sphere_mesh(6, 4)
    quads, fans = mesh.polygons()
    tris = mesh.triangles()
    first, second = vopt.polygon_pairs(mesh.n_lon, mesh.n_lat, np.arange(len(tris)))
    q = len(quads)
    assert np.array_equal(tris[first[:q]], quads[:, [0, 1, 2]])
    assert np.array_equal(tris[second[:q]], quads[:, [0, 2, 3]])
    assert np.array_equal(tris[first[q:]], fans) and np.array_equal(first[q:], second[q:])
    with pytest.raises(vopt.ViewOptionError):
        vopt.polygon_pairs(6, 4, np.arange(len(tris) - 1))
