"""The checker's files read back: the JSON report against the schema in docs/checker.md,
the PNG decoded to pixels, and ``--weld`` against an independent count of distinct points."""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pytest
import surfaces
from references import require

from turnabout.check import check_animation
from turnabout.cli import main
from turnabout.mesh import round_sphere_positions, uniform_sphere_mesh
from turnabout.meshfiles import read_sequence
from turnabout.meshfiles.npz import write_npz
from turnabout.meshfiles.obj import write_obj_sequence

DOCS = Path(__file__).resolve().parent.parent / "docs" / "checker.md"


# --------------------------------------------------------------- the schema, from the docs


def _schema_tables() -> tuple[dict[str, tuple[str, str]], dict[str, tuple[str, str]]]:
    """{key: (type text, meaning text)} of the top-level and per-frame tables of the section
    'JSON schema' in docs/checker.md (a row may document several keys)."""
    text = DOCS.read_text(encoding="utf-8")
    section = text.split("## JSON schema", 1)[1].split("\n## ", 1)[0]
    top_text, frame_text = section.split("Per frame:", 1)
    tables = []
    for part in (top_text, frame_text):
        rows: dict[str, tuple[str, str]] = {}
        for line in part.splitlines():
            cells = [c.strip() for c in re.split(r"(?<!\\)\|", line.strip())[1:-1]]
            if len(cells) != 3 or cells[0] in ("key", "---"):
                continue
            for key in re.findall(r"`([a-z_]+)`", cells[0]):
                rows[key] = (cells[1], cells[2])
        tables.append(rows)
    return tables[0], tables[1]


def _is_number(v) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool)


def _is_int(v) -> bool:
    return isinstance(v, int) and not isinstance(v, bool)


def _is_xyz(v) -> bool:
    return isinstance(v, list) and len(v) == 3 and all(_is_number(x) for x in v)


# the type words of the docs' tables, each as a check of a JSON value
TYPE_CHECKS = {
    "string": lambda v: isinstance(v, str),
    "bool": lambda v: isinstance(v, bool),
    "int": _is_int,
    "number": _is_number,
    "object": lambda v: isinstance(v, dict),
    "list": lambda v: isinstance(v, list),
    "list of strings": lambda v: isinstance(v, list) and all(isinstance(x, str) for x in v),
    "list of int": lambda v: isinstance(v, list) and all(_is_int(x) for x in v),
    "list of bool": lambda v: isinstance(v, list) and all(isinstance(x, bool) for x in v),
    "list of objects": lambda v: isinstance(v, list) and all(isinstance(x, dict) for x in v),
    "list of [x, y, z]": lambda v: isinstance(v, list) and all(_is_xyz(x) for x in v),
    "[x, y, z]": _is_xyz,
    '`"ok"` \\| `"warn"` \\| `"fail"`': lambda v: v in ("ok", "warn", "fail"),
}


def _type_ok(type_text: str, value) -> bool:
    alternatives = type_text.split(" or ")
    if alternatives[-1] == "null":
        if value is None:
            return True
        alternatives = alternatives[:-1]
    assert len(alternatives) == 1, f"type {type_text!r} is not one the test knows"
    assert alternatives[0] in TYPE_CHECKS, f"type {type_text!r} is not one the test knows"
    return TYPE_CHECKS[alternatives[0]](value)


def _listed_fields(meaning: str) -> set[str]:
    """The sub-field names a meaning cell lists in backticks, outside parentheses (which
    hold values and remarks)."""
    while True:
        stripped = re.sub(r"\([^()]*\)", "", meaning)
        if stripped == meaning:
            return set(re.findall(r"`([a-z_]+)`", stripped))
        meaning = stripped


def _assert_matches_docs(data: dict) -> None:
    top, per_frame = _schema_tables()
    assert {"schema", "verdict", "frames", "topology"} <= set(top)  # the tables were found
    assert {"frame", "reasons", "triple_point_count"} <= set(per_frame)
    # every documented field present with its documented type; nothing undocumented
    assert set(data) == set(top), set(data) ^ set(top)
    for key, (type_text, _) in top.items():
        assert _type_ok(type_text, data[key]), (key, type_text, data[key])
    assert data["schema"] == "turnabout.check/1"
    for fr in data["frames"]:
        assert set(fr) == set(per_frame), set(fr) ^ set(per_frame)
        for key, (type_text, _) in per_frame.items():
            assert _type_ok(type_text, fr[key]), (key, type_text, fr[key])
        assert set(fr["worst_element"]) == _listed_fields(per_frame["worst_element"][1])
        assert fr["worst_element"]["kind"] in ("face", "edge", "vertex")
        for sp in fr["singular_points"]:
            assert set(sp) == _listed_fields(per_frame["singular_points"][1])
    # the objects whose fields the meaning column lists
    assert set(data["topology"]) == _listed_fields(top["topology"][1])
    if data["eversion"] is not None:
        assert set(data["eversion"]) == _listed_fields(top["eversion"][1])
    from dataclasses import fields

    from turnabout.check import Thresholds

    assert set(data["thresholds"]) == {f.name for f in fields(Thresholds)}  # "every field"
    quad = data["quadruple_points"]
    if quad is not None:
        documented = _listed_fields(top["quadruple_points"][1])
        point_fields = {"frames", "time", "position", "faces", "confirmed"}
        assert set(quad) == documented - point_fields
        for p in quad["points"]:
            assert set(p) == point_fields


@pytest.fixture(scope="module")
def sphere():
    mesh = uniform_sphere_mesh(24, 12)
    return round_sphere_positions(mesh), mesh.triangles()


@pytest.fixture(scope="module")
def push(tmp_path_factory, sphere):
    """The naive push-through (z scaled from 1 to -1): 11 frames, failing in the middle."""
    p0, faces = sphere
    pos = np.stack([p0 * np.array([1.0, 1.0, s]) for s in np.linspace(1, -1, 11)])
    return write_npz(tmp_path_factory.mktemp("push") / "push.npz", pos, faces), pos


def test_json_report_of_the_command_matches_the_documented_schema(tmp_path, push):
    path, pos = push
    out = tmp_path / "r.json"
    assert main(["check", str(path), "--json", str(out), "--quadruple-points", "--quiet"]) == 1
    data = json.loads(out.read_text(encoding="utf-8"))
    _assert_matches_docs(data)
    # and it says what the animation is: the content, not only the shape
    assert data["n_frames"] == len(data["frames"]) == pos.shape[0]
    assert data["verdict"] == "fail" and data["everted"] is True
    assert data["failing_frames"] == [f["frame"] for f in data["frames"] if f["verdict"] == "fail"]
    assert 5 in data["failing_frames"]  # the flat middle frame
    assert data["eversion"]["orientation_reversed"] is True
    assert data["topology"]["euler_characteristic"] == 2
    assert data["level_up"] == [0.0, 0.0, 1.0]
    # signed volume of a z-scaled unit sphere: s 4 pi / 3 to mesh accuracy (linear map)
    s = np.linspace(1, -1, 11)
    vols = np.array([f["signed_volume"] for f in data["frames"]])
    assert np.allclose(vols / vols[0], s, atol=1e-12)


def test_json_report_without_a_sphere_or_intersections_matches_the_schema(tmp_path):
    # a torus (chi = 0): no eversion object, no level up, no intersections checked
    p, f = surfaces.torus()
    report = check_animation(np.stack([p, 1.01 * p]), f, intersections=False)
    data = json.loads(report.write_json(tmp_path / "t.json").read_text(encoding="utf-8"))
    _assert_matches_docs(data)
    assert data["eversion"] is None and data["quadruple_points"] is None
    assert data["intersections_checked"] is False and data["level_up"] is None
    assert data["topology"]["euler_characteristic"] == 0 and data["topology"]["genus"] == 1


# --------------------------------------------------------------- the plot, decoded

# the plot shades failing frames tab:red (214, 39, 40) and warning frames gold (255, 215,
# 0) at alpha 0.25 over white (report.write_plot): the blended colours to look for
_FAIL_TINT = 0.75 + 0.25 * np.array([214, 39, 40]) / 255
_WARN_TINT = 0.75 + 0.25 * np.array([255, 215, 0]) / 255


def _shaded_columns(img: np.ndarray, tint: np.ndarray) -> int:
    """Pixel columns with at least 300 pixels of the tint: a shaded frame runs down every
    panel, while the tint's few anti-aliased pixels along a dashed threshold line do not."""
    hit = np.all(np.abs(img[..., :3] - tint) < 0.02, axis=-1)
    return int(np.sum(hit.sum(axis=0) >= 300))


def test_plot_png_decodes_to_a_figure_shading_exactly_the_failing_frames(tmp_path, push, sphere):
    mpimg = require("matplotlib.image")
    path, _ = push
    out = tmp_path / "push.png"
    js = tmp_path / "push.json"
    assert main(["check", str(path), "--plot", str(out), "--json", str(js), "--quiet",
                 "--no-intersections"]) == 1  # fmt: skip
    data = json.loads(js.read_text(encoding="utf-8"))
    n_fail, n_warn = len(data["failing_frames"]), len(data["warning_frames"])
    assert n_fail >= 1 and n_warn >= 1
    img = mpimg.imread(out)
    # 8 x 11.2 inches at 110 dpi (report.write_plot), RGBA floats
    assert img.shape == (1232, 880, 4)
    # each frame's shading is one frame wide: the shaded widths are as the frame counts
    red, gold = _shaded_columns(img, _FAIL_TINT), _shaded_columns(img, _WARN_TINT)
    assert red > 5
    assert gold / red == pytest.approx(n_warn / n_fail, rel=0.1)
    assert np.sum(np.all(img[..., :3] < 0.1, axis=-1)) > 1000  # curves and text are drawn
    # a breathing sphere passes every frame: nothing shaded red
    p0, faces = sphere
    scale = 1.0 + 0.1 * np.sin(np.linspace(0, np.pi, 8))
    ok = write_npz(tmp_path / "breathe.npz", p0[None] * scale[:, None, None], faces)
    assert main(["check", str(ok), "--plot", str(tmp_path / "ok.png"), "--quiet"]) == 0
    img_ok = mpimg.imread(tmp_path / "ok.png")
    assert img_ok.shape == img.shape
    assert _shaded_columns(img_ok, _FAIL_TINT) == 0 and _shaded_columns(img_ok, _WARN_TINT) == 0


# --------------------------------------------------------------- welding


def _distinct_points(positions: np.ndarray) -> int:
    """Vertices distinct in some frame: unique rows of each vertex's whole trajectory."""
    traj = np.ascontiguousarray(positions.transpose(1, 0, 2).reshape(positions.shape[1], -1))
    return int(np.unique(traj, axis=0).shape[0])


def test_weld_merges_exactly_the_coincident_vertices_and_keeps_every_corner(tmp_path):
    frames, polys = surfaces.sphere_with_a_seam()
    write_obj_sequence(tmp_path / "obj", frames, polys)
    distinct = _distinct_points(frames)
    assert distinct < frames.shape[1]  # the case has duplicates to merge
    welded = read_sequence(tmp_path / "obj", weld=True)
    assert welded.n_vertices == distinct
    assert _distinct_points(welded.positions) == distinct  # nothing left to merge
    # every corner of every face still sits on the same point, in the same order
    before = np.concatenate(polys)
    after = np.concatenate([np.asarray(p) for p in welded.polygons])
    assert np.array_equal(welded.positions[:, after], frames[:, before])

    # the command: the welded sphere is closed with chi = 2; unwelded it has a slit
    for weld, closed in ((True, True), (False, False)):
        out = tmp_path / f"weld_{weld}.json"
        args = ["check", str(tmp_path / "obj"), "--json", str(out), "--quiet",
                "--no-intersections"] + (["--weld"] if weld else [])  # fmt: skip
        main(args)
        topo = json.loads(out.read_text(encoding="utf-8"))["topology"]
        assert topo["closed"] is closed
        assert topo["n_vertices"] == (distinct if weld else frames.shape[1])
        if weld:
            assert topo["euler_characteristic"] == 2 and topo["is_manifold"] is True
