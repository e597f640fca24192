"""The command line as a user meets it, part 1: one vocabulary, early refusals, exit codes.

Each test reproduces a reported misbehaviour and checks the fixed behaviour. Exit codes
follow README.md, "Exit codes": 0 success, 1 the verdict fails or a homotopy is impossible,
2 bad input or an unwritable output, 130 cancelled. Shared helpers: tests/cli_support.py;
the fixtures (breathing, pushed, curves, no_scan): tests/conftest.py.
(Part 2, what the commands write and how they stop: tests/test_cli_outputs.py.)
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
import time
import warnings

import numpy as np
import pytest
from cli_support import REPO, cli_env, run_cli
from surfaces import round_sphere

from turnabout.cli import build_parser, main

CONTROL_OPTIONS = {
    "--strips", "--depth", "--ripple", "--swap", "--twist", "--tuck", "--calm",
    "--frames", "--spacing", "--lon", "--lat",
}  # fmt: skip


def _options(parser_name: str) -> dict:
    parser = build_parser(parser_name)
    sub = next(a for a in parser._actions if a.dest == "command")
    p = sub.choices[parser_name]
    return {
        s: (a.dest, a.type, a.metavar, a.help, a.default)
        for a in p._actions
        for s in a.option_strings
        if s in CONTROL_OPTIONS
    }


# --------------------------------------------------------------------------- one vocabulary


def test_build_scene_and_demo_take_the_same_control_options():
    build = _options("build")
    assert set(build) == CONTROL_OPTIONS
    for name in ("scene", "demo"):
        assert _options(name) == build, name


def test_help_states_the_depth_and_frames_that_really_apply():
    from turnabout.eversion import default_depth, default_frames

    depth_help = _options("build")["--depth"][3]
    # the help's runs ("0.16 for 8-9 strips, 0.15 for 10-16 strips") name every count's depth
    runs = re.findall(r"([0-9.]+) for (\d+)(?:-(\d+))? strips", depth_help)
    said = {n: float(d) for d, a, b in runs for n in range(int(a), int(b or a) + 1)}
    assert said == {n: default_depth(n) for n in range(8, 17)}
    frames_help = _options("build")["--frames"][3]
    assert f"{default_frames(8)} for 8 strips" in frames_help
    assert f"{default_frames(16)} for 16" in frames_help


def test_stage_windows_have_one_syntax(capsys, no_scan):
    # START,END everywhere; the old scene syntax STAGE=START:END is gone
    assert main(["build", "--tuck", "0.6:0.9", "--quiet"]) == 2
    assert "START,END" in capsys.readouterr().err
    assert main(["scene", "x.blend", "--timing", "tuck=0.6:0.9"]) == 2
    assert main(["demo", "--timing", "tuck=0.6:0.9"]) == 2


def test_the_documented_scene_example_is_accepted():
    from turnabout.commands.controls_options import read_controls

    args = build_parser("scene").parse_args(
        ["scene", "shot.blend", "--frames", "240", "--strips", "10", "--lon", "320",
         "--lat", "127"]
    )  # fmt: skip
    choice = read_controls(args)
    assert (choice.controls.strips, choice.frames, choice.lon, choice.lat) == (10, 240, 320, 127)


def test_strips_outside_the_working_range_are_refused_up_front_with_that_range(capsys, no_scan):
    t0 = time.perf_counter()
    assert main(["build", "--strips", "64", "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "--strips" in err and "8 to 16" in err and "64" in err
    assert time.perf_counter() - t0 < 2.0


@pytest.mark.parametrize("strips, depth", [(8, 0.13), (16, 0.13), (16, 0.16)])
def test_the_documented_range_passes_the_build_gate(strips, depth):
    # the ends of the documented ranges (README: strips 8-16, depth 0.13-0.16) must build
    from turnabout.eversion import MAX_STRIPS, Controls, depth_range
    from turnabout.eversion.regularity import require_regular

    assert MAX_STRIPS == 16 and depth_range() == (0.13, 0.16)
    require_regular(Controls(strips=strips, depth=depth))


def test_a_gate_refusal_states_what_passes_for_the_combination_given():
    from turnabout.eversion import Controls
    from turnabout.eversion.regularity import controls_range_text

    custom = Controls(timing={**Controls().timing, "tuck": (0.6, 0.97)})
    text = " ".join(controls_range_text(custom))
    assert "strips 8-16" in text and "for 8 strips depth 0.13-0.16" in text
    assert "tuck" in text  # names the changed window


# --------------------------------------------------------------------------- refuse early


@pytest.mark.parametrize(
    "argv, words",
    [
        (["--frames", "1"], "--frames"),
        (["--lon", "60"], "--lon"),
        (["--lat", "3"], "--lat"),
        (["--depth", "nan"], "--depth"),
        (["--tuck", "0.9,0.6"], "--tuck"),
        (["--spacing", "even", "--lon", "8000", "--lat", "4000"], "--lon/--lat"),
    ],
)
def test_bad_controls_are_refused_before_any_scan(capsys, no_scan, argv, words):
    t0 = time.perf_counter()
    assert main(["build", *argv, "--quiet"]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"turnabout build: {words}:"), err
    assert time.perf_counter() - t0 < 2.0


def test_check_refuses_zero_workers_before_reading_the_file(tmp_path, monkeypatch, capsys):
    import turnabout.meshfiles

    def boom(*a, **k):
        raise AssertionError("the file was read before the refusal")

    monkeypatch.setattr(turnabout.meshfiles, "read_sequence", boom)
    assert main(["check", str(tmp_path / "x.npz"), "--workers", "0"]) == 2
    assert "--workers" in capsys.readouterr().err


@pytest.mark.parametrize("grid", [["-1", "10", "10"], ["0", "0", "0"], ["4", "3", "1"]])
def test_bad_scan_grids_are_refused_without_a_traceback(capsys, no_scan, grid):
    assert main(["build", "--scan-only", "--scan-grid", *grid, "--quiet"]) == 2
    assert "--scan-grid" in capsys.readouterr().err


@pytest.mark.parametrize("value", ["nan", "inf", "-inf"])
def test_a_direction_must_be_a_finite_angle(tmp_path, capsys, curves, value):
    a, b = curves["a"], curves["b"]
    for argv in (
        ["curve", "info", a, f"--direction={value}"],
        ["curve", "morph", a, b, "--out", str(tmp_path / "m.npz"), f"--direction={value}"],
    ):
        assert main(argv) == 2
        assert "finite angle" in capsys.readouterr().err
    assert not (tmp_path / "m.npz").exists()


def test_nan_in_a_single_obj_names_that_file(tmp_path, capsys):
    f = tmp_path / "frames" / "bad.obj"
    f.parent.mkdir()
    f.write_text("v 0 0 0\nv 1 0 0\nv 0 nan 0\nf 1 2 3\n")
    assert main(["check", str(f), "--quiet"]) == 2
    assert f"{f}: positions contain NaN" in capsys.readouterr().err


def test_threshold_errors_name_the_option_as_typed(breathing, capsys):
    assert main(["check", str(breathing), "--area-warn", "0.001", "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "--area-fail" in err and "--area-warn" in err and "area_ratio" not in err


def test_collapsed_frames_raise_no_numpy_warnings():
    from turnabout.check import check_animation
    from turnabout.check.curvature import principal_curvatures

    p0, faces = round_sphere(10)
    collapsed = {
        "point": 0.0 * p0,
        "segment": p0 * np.array([1.0, 0.0, 0.0]),
        "pinched cap": np.where(p0[:, 2:3] > 0.5, p0 * np.array([0.0, 0.0, 1.0]), p0),
    }
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        for p in collapsed.values():
            rep = check_animation(np.stack([p0, p, p0]), faces, intersections=True)
            assert rep.frames[1].verdict == "fail"
            principal_curvatures(p, faces)


# --------------------------------------------------------------------------- exit codes


def test_the_readme_states_one_exit_code_table():
    text = (REPO / "README.md").read_text()
    section = text[text.index("## Exit codes") :]
    section = section[: section.index("\n## ", 4)] if "\n## " in section[4:] else section
    rows = dict(re.findall(r"^\| (\d+) \| (.+) \|$", section, re.M))
    assert set(rows) == {"0", "1", "2", "130"}
    for words, code in (("success", "0"), ("verdict fails", "1"), ("bad input", "2"),
                        ("cancelled", "130")):  # fmt: skip
        assert words in rows[code]
    for command in ("build", "check", "curve info", "curve morph", "scene", "render", "demo"):
        assert f"`{command}`" in text


def test_exit_codes_of_check(breathing, pushed, tmp_path):
    assert main(["check", str(breathing), "--quiet"]) == 0
    assert main(["check", str(pushed), "--no-intersections", "--quiet"]) == 1
    assert main(["check", str(tmp_path / "missing.npz"), "--quiet"]) == 2


def test_exit_codes_of_curve_info_and_morph(tmp_path, curves):
    a, b, s = curves["a"], curves["b"], curves["s"]
    out = str(tmp_path / "m.npz")
    assert main(["curve", "info", s]) == 0
    assert main(["curve", "info", str(tmp_path / "none.svg")]) == 2
    assert main(["curve", "morph", a, b, "--frames", "4", "--out", out, "--quiet"]) == 0
    assert main(["curve", "morph", a, s, "--out", str(tmp_path / "n.npz"), "--quiet"]) == 1
    assert main(["curve", "morph", a, b, "--frames", "1", "--out", out, "--quiet"]) == 2


def test_exit_codes_of_build(tmp_path):
    out = tmp_path / "a.npz"
    assert main(["build", "--frames", "2", "--spacing", "even", "--lon", "64", "--lat", "16",
                 "--out", str(out), "--quiet"]) == 0  # fmt: skip
    assert out.is_file()
    assert main(["build", "--strips", "7", "--quiet"]) == 2


@pytest.mark.blender
def test_exit_codes_of_scene_render_and_demo_and_render_range(tmp_path):
    env = cli_env(BLENDER_USER_RESOURCES=str(tmp_path / "user"))
    blend = tmp_path / "shot.blend"
    small = ["--spacing", "even", "--lon", "64", "--lat", "16", "--quiet"]
    p = run_cli("scene", blend, "--frames", "6", *small, env=env)
    assert p.returncode == 0, p.stderr
    assert run_cli("scene", tmp_path / "x.blend", "--strips", "64", env=env).returncode == 2
    frames = tmp_path / "png"
    p = run_cli("render", blend, frames, "--frames", "1,6", "--size", "32x24", "--samples", "2",
             "--quiet", env=env)  # fmt: skip
    assert p.returncode == 0, p.stderr
    assert sorted(os.listdir(frames)) == ["frame_0001.png", "frame_0006.png"]
    assert "Saved:" not in p.stdout and "Saved:" not in p.stderr  # Blender's own prints
    p = run_cli("render", blend, frames, "--frames", "99999", "--quiet", env=env)
    assert p.returncode == 2 and "1-6" in p.stderr and "Traceback" not in p.stderr
    assert not (frames / "frame_99999.png").exists()
    # the coarse demo's mesh cannot follow the waves: its verdict fails, exit 1
    p = run_cli("demo", "--out", tmp_path / "demo", "--frames", "12", *small, "--previews", "1",
             "--size", "32x24", "--samples", "2", env=env)  # fmt: skip
    assert p.returncode == 1, p.stdout + p.stderr
    assert "verdict:  fail" in p.stdout
    p = run_cli("demo", "--out", tmp_path / "no" / "demo", env=env)
    assert p.returncode == 2 and "does not exist" in p.stderr


# --------------------------------------------------------------------------- demo


def test_the_demo_bar_weights_each_frame_by_its_checking_cost():
    from turnabout.eversion import Controls
    from turnabout_blender.blender_commands import _DemoProgress, check_cost_per_frame

    w = check_cost_per_frame(Controls(), 480)
    assert w.shape == (480,) and abs(w.sum() - 1.0) < 1e-12
    assert 8.0 < w.max() / w.min() < 11.0  # mid-motion frames cost about ten times more
    assert w[240] > 5 * w[0] and w[240] > 5 * w[-1]
    seen = []
    step = _DemoProgress(lambda d, t: seen.append(d), 480, 4, w)
    for phase, n in (("bake", 480), ("read", 480), ("check", 480), ("preview", 4)):
        for d in range(0, n + 1, 4 if n > 4 else 1):
            step(phase, d, n)
    assert seen == sorted(seen) and seen[-1] == 1000
    # the first quarter of the frames is cheap: it moves the check's part of the bar by
    # well under a quarter (counting frames, the old bar sat still for the costly middle)
    at = {}
    for d in (0, 120, 480):
        step("check", d, 480)
        at[d] = seen[-1]
    assert (at[120] - at[0]) < 0.15 * (at[480] - at[0])


def test_a_plot_without_matplotlib_is_refused_before_the_check(
    breathing, tmp_path, monkeypatch, capsys
):
    import turnabout.check as check_pkg

    monkeypatch.setitem(sys.modules, "matplotlib", None)  # as if not installed

    def boom(*a, **k):
        raise AssertionError("the check ran before the refusal")

    monkeypatch.setattr(check_pkg, "check_animation", boom)
    assert main(["check", str(breathing), "--plot", str(tmp_path / "p.png"), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "--plot" in err and "'plot' extra" in err


def test_the_demo_folder_is_ignored_by_git():
    assert "turnabout-demo/" in (REPO / ".gitignore").read_text().split()


@pytest.mark.blender
def test_the_extension_build_says_what_it_validated_and_with_what(tmp_path):
    proc = subprocess.run(
        [sys.executable, str(REPO / "build.py"), "--out", str(tmp_path)],
        capture_output=True,
        text=True,
        env=cli_env(),
        timeout=600,
    )
    assert proc.returncode == 0, proc.stderr
    assert "validated by Blender's extension validator" in proc.stdout
    assert "blender_ext.py" in proc.stdout and "blender_manifest.toml" in proc.stdout
