"""Rendering and the headless commands: side colours on pixels, frame ranges, resume."""

from __future__ import annotations

import json
import os
import subprocess
import sys

import numpy as np
import pytest
from blender_support import REPO, blank, bpy, evaluated_positions  # noqa: F401  (fixture)

from turnabout.frame_ranges import frame_path

pytestmark = pytest.mark.blender


def _sides(rgba: np.ndarray):
    """Masks of sphere pixels leaning to the outer (warm) or inner (teal) colour."""
    sphere = rgba[..., 3] > 0.5  # rendered with a transparent film: background alpha 0
    r, b = rgba[..., 0], rgba[..., 2]
    warm = sphere & (r > b + 0.08)
    teal = sphere & (b > r + 0.08)
    return sphere, warm, teal


@pytest.mark.usefixtures("blank")
def test_first_frame_shows_only_the_outer_colour_and_last_only_the_inner(tmp_path):
    from turnabout.eversion import Controls
    from turnabout_blender import headless
    from turnabout_blender.props import INNER_COLOUR, OUTER_COLOUR

    # the test's colour masks rely on the defaults being warm outside and teal inside
    assert OUTER_COLOUR[0] > OUTER_COLOUR[2] + 0.3 and INNER_COLOUR[2] > INNER_COLOUR[0] + 0.3
    from turnabout.mesh import uniform_sphere_mesh

    headless.build_scene(
        Controls(),
        frames=6,
        mesh=uniform_sphere_mesh(64, 24),
        engine="cycles",
        size=(64, 48),
        samples=8,
    )
    scene = bpy.context.scene
    scene.render.film_transparent = True  # the scene's own film is opaque (dark world)
    out = str(tmp_path / "frames")
    done, skipped = headless.render_frames(scene, out, [1, 6], resume=False)
    assert done == [1, 6] and skipped == []
    first = headless.read_png(frame_path(out, 1))
    last = headless.read_png(frame_path(out, 6))
    assert first.shape == (48, 64, 4)
    for img, want, other in ((first, 1, 2), (last, 2, 1)):
        masks = _sides(img)
        n = masks[0].sum()
        assert n > 0.08 * img.shape[0] * img.shape[1]  # the sphere fills a good part of the view
        assert masks[want].sum() >= 0.97 * n
        assert masks[other].sum() == 0


@pytest.mark.usefixtures("blank")
def test_scene_and_render_commands_render_ranges_and_resume(tmp_path, capsys):
    from turnabout.cli import main

    blend = str(tmp_path / "shot.blend")
    small = ["--spacing", "even", "--lon", "64", "--lat", "16"]
    assert main(["scene", blend, "--frames", "6", *small, "--quiet"]) == 0
    assert os.path.isfile(blend)
    out = str(tmp_path / "png")
    args = ["render", blend, out, "--size", "32x24", "--samples", "2", "--quiet"]
    assert main(args + ["--frames", "1-3"]) == 0
    assert sorted(os.listdir(out)) == ["frame_0001.png", "frame_0002.png", "frame_0003.png"]
    stamp = os.path.getmtime(os.path.join(out, "frame_0002.png"))
    capsys.readouterr()
    assert main(args + ["--frames", "1-5,6"]) == 0
    said = capsys.readouterr().out
    assert "rendered 3 frames, skipped 3" in said
    assert os.path.getmtime(os.path.join(out, "frame_0002.png")) == stamp
    assert len(os.listdir(out)) == 6  # no temporary files left
    assert main(args + ["--frames", "1-6:5", "--overwrite", "--engine", "workbench"]) == 0
    assert "rendered 2 frames, skipped 0" in capsys.readouterr().out


@pytest.mark.parametrize(
    "argv, message",
    [
        (["render", "{blend}", "{out}", "--frames", "9-3"], "end before start"),
        (["render", "{blend}", "{out}", "--frames", "one"], "cannot read"),
        (["render", "{tmp}/missing.blend", "{out}"], "no such .blend"),
        (["scene", "{tmp}/x.blend", "--strips", "3"], "strips"),
        (["scene", "{tmp}/x.txt"], "must end in .blend"),
    ],
)
@pytest.mark.usefixtures("blank")
def test_bad_command_input_gets_a_clear_message(tmp_path, capsys, argv, message):
    from turnabout.cli import main

    blend = str(tmp_path / "ok.blend")
    small = ["--spacing", "even", "--lon", "64", "--lat", "16"]
    assert main(["scene", blend, "--frames", "3", *small, "--quiet"]) == 0
    capsys.readouterr()
    fill = {"blend": blend, "out": str(tmp_path / "o"), "tmp": str(tmp_path)}
    assert main([a.format(**fill) for a in argv] + ["--quiet"]) == 2
    assert message in capsys.readouterr().err
    assert not os.path.exists(tmp_path / "x.blend")


def test_the_in_blender_script_writes_a_scene(tmp_path):
    script = os.path.join(REPO, "tools", "run_in_blender.py")
    blend = str(tmp_path / "via_script.blend")
    env = dict(os.environ, BLENDER_USER_RESOURCES=str(tmp_path / "user"))
    proc = subprocess.run(
        [
            sys.executable,
            script,
            "--",
            "scene",
            blend,
            "--frames",
            "4",
            "--spacing",
            "even",
            "--lon",
            "64",
            "--lat",
            "16",
            "--quiet",
        ],
        capture_output=True,
        text=True,
        env=env,
        timeout=120,
    )
    assert proc.returncode == 0, proc.stderr
    assert os.path.isfile(blend)


@pytest.mark.usefixtures("blank")
def test_strip_tint_marks_every_other_strip_and_both_sides_keep_their_colours():
    s = bpy.context.scene.turnabout
    s.frames, s.mesh_lon, s.mesh_lat = 4, 480, 16
    s.strips = 8
    s.colour_strips = True
    bpy.ops.turnabout.add_eversion()
    ob = bpy.context.active_object
    me = ob.data
    guide = np.empty(len(me.polygons), np.float32)
    me.attributes["turnabout_guide"].data.foreach_get("value", guide)
    ring = guide[:480]  # the first ring of quads, in longitude order
    changes = int(np.sum(ring != np.roll(ring, 1)))
    assert changes == 2 * 8  # 8 guide strips alternating with 8 corrugated strips
    # the bands follow longitude, not sample count (the default mesh spaces them unevenly):
    # each band is a sixteenth of the circle centred on a guide meridian or between two,
    # read from the face centres of the round sphere
    centre = np.empty(len(me.polygons) * 3, np.float32)
    me.polygons.foreach_get("center", centre)
    xy = centre.reshape(-1, 3)[:480, :2].astype(float)
    azimuth = np.mod(np.arctan2(xy[:, 1], xy[:, 0]) + np.pi / 16, 2 * np.pi)
    band = np.floor(azimuth / (np.pi / 8))
    assert np.array_equal(ring.astype(bool), band.astype(int) % 2 == 0)
    nodes = me.materials[0].node_tree.nodes
    assert nodes["Guide strips"].attribute_name == "turnabout_guide"
    assert tuple(nodes["Outer side"].outputs[0].default_value) == pytest.approx(
        tuple(s.outer_colour)
    )
    assert tuple(nodes["Inner side"].outputs[0].default_value) == pytest.approx(
        tuple(s.inner_colour)
    )
    # switching the tint off and new colours update the same material in place
    s.colour_strips = False
    s.outer_colour = (0.2, 0.8, 0.2, 1.0)
    n_materials = len(bpy.data.materials)
    bpy.ops.turnabout.apply_look()
    assert len(bpy.data.materials) == n_materials
    assert nodes["Guide strips"].attribute_name == ""
    assert tuple(nodes["Outer side"].outputs[0].default_value) == pytest.approx(
        (0.2, 0.8, 0.2, 1.0)
    )


@pytest.mark.usefixtures("blank")
def test_alembic_and_usd_exports_write_the_animation(tmp_path):
    s = bpy.context.scene.turnabout
    s.frames, s.mesh_lon, s.mesh_lat = 5, 64, 16
    bpy.ops.turnabout.add_eversion()
    abc, usd = tmp_path / "ev.abc", tmp_path / "ev.usdc"
    assert bpy.ops.turnabout.export_alembic(filepath=str(abc)) == {"FINISHED"}
    assert bpy.ops.turnabout.export_usd(filepath=str(usd)) == {"FINISHED"}
    # read back by Blender's own importers: every frame's vertex positions as exported
    ev = bpy.context.active_object
    scene = bpy.context.scene
    frames = range(scene.frame_start, scene.frame_end + 1)
    want = evaluated_positions(ev, frames)
    for path, importer in ((abc, bpy.ops.wm.alembic_import), (usd, bpy.ops.wm.usd_import)):
        before = set(bpy.data.objects)
        assert importer(filepath=str(path)) == {"FINISHED"}
        new = [o for o in bpy.data.objects if o not in before and o.type == "MESH"]
        assert len(new) == 1, (path.name, [o.name for o in new])
        got = evaluated_positions(new[0], frames)
        assert got.shape == want.shape, path.name
        np.testing.assert_allclose(got, want, rtol=0, atol=1e-5, err_msg=path.name)
        assert np.ptp(want[:, :, 2].mean(axis=1)) + np.abs(want[-1] - want[0]).max() > 0.1
        bpy.data.objects.remove(new[0])


@pytest.mark.skipif(
    __import__("importlib").util.find_spec("turnabout.check") is None
    or not hasattr(__import__("turnabout.check", fromlist=["x"]), "check_animation"),
    reason="the core checker is not available",
)
@pytest.mark.usefixtures("blank")
def test_demo_writes_a_blend_a_report_and_previews(tmp_path, capsys):
    from turnabout.cli import main

    out = tmp_path / "demo"
    argv = ["demo", "--out", str(out), "--frames", "8", "--spacing", "even", "--lon", "64",
            "--lat", "16", "--previews", "2"]  # fmt: skip
    # so coarse a mesh cannot follow the waves: the verdict fails and the demo says so (1)
    assert main(argv + ["--size", "32x24", "--samples", "2", "--quiet"]) == 1
    said = capsys.readouterr().out
    assert str(out) in said
    assert (out / "eversion.blend").is_file()
    assert (out / "eversion_Eversion_check.json").is_file()
    assert sorted(os.listdir(out / "preview")) == ["frame_0001.png", "frame_0008.png"]
    # the report carries the bake's times: frame k of 8 at time k / 7
    report = json.loads((out / "eversion_Eversion_check.json").read_text())
    assert [f["time"] for f in report["frames"]] == pytest.approx([k / 7 for k in range(8)])
    assert "noted, of 8)" in said
