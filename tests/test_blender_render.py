"""Rendering and the headless commands: side colours on pixels, frame ranges, resume."""

from __future__ import annotations

import os
import subprocess
import sys

import numpy as np
import pytest
from blender_support import REPO, blank, bpy  # noqa: F401  (fixture)

pytestmark = pytest.mark.blender


def _sides(rgba: np.ndarray):
    """Masks of sphere pixels leaning to the outer (warm) or inner (teal) colour."""
    sphere = rgba[..., 3] > 0.5  # transparent film: background has alpha 0
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
        mesh=uniform_sphere_mesh(48, 23),
        engine="cycles",
        size=(64, 48),
        samples=8,
    )
    scene = bpy.context.scene
    out = str(tmp_path / "frames")
    done, skipped = headless.render_frames(scene, out, [1, 6], resume=False)
    assert done == [1, 6] and skipped == []
    first = headless.read_png(headless.frame_path(out, 1))
    last = headless.read_png(headless.frame_path(out, 6))
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
    assert main(["scene", blend, "--frames", "6", "--mesh", "16x7", "--quiet"]) == 0
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
    assert main(["scene", blend, "--frames", "3", "--mesh", "8x3", "--quiet"]) == 0
    capsys.readouterr()
    fill = {"blend": blend, "out": str(tmp_path / "o"), "tmp": str(tmp_path)}
    assert main([a.format(**fill) for a in argv] + ["--quiet"]) == 2
    assert message in capsys.readouterr().err
    assert not os.path.exists(tmp_path / "x.blend")


def test_run_headless_script_writes_a_scene(tmp_path):
    script = os.path.join(REPO, "addon", "run_headless.py")
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
            "--mesh",
            "12x5",
            "--quiet",
        ],
        capture_output=True,
        text=True,
        env=env,
        timeout=120,
    )
    assert proc.returncode == 0, proc.stderr
    assert os.path.isfile(blend)
