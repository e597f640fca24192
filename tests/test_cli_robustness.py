"""The command line as a user meets it: one vocabulary, outputs, early refusals, exit codes.

Each test reproduces a reported misbehaviour (a documented example refused, a 3 GB folder
named ``a.txt``, a refusal after seconds of work, a traceback, a wrong exit code, builds
that differ from run to run) and checks the fixed behaviour. Exit codes follow README.md,
"Exit codes": 0 success, 1 the verdict fails or a homotopy is impossible, 2 bad input or
an unwritable output, 130 cancelled.
"""

from __future__ import annotations

import io
import json
import os
import re
import signal
import subprocess
import sys
import threading
import time
import warnings
from pathlib import Path

import numpy as np
import pytest
from turnabout import meshseq, output
from turnabout.cli import build_parser, main
from turnabout.surfaces import round_sphere

REPO = Path(__file__).resolve().parents[1]
CONTROL_OPTIONS = {
    "--strips", "--depth", "--ripple", "--swap", "--twist", "--tuck", "--calm",
    "--frames", "--spacing", "--lon", "--lat",
}  # fmt: skip


def _env(**extra) -> dict:
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(
        [str(REPO / "core"), str(REPO), *filter(None, [env.get("PYTHONPATH")])]
    )
    env.update(extra)
    return env


def _cli(*args, env=None, timeout=600, **kw) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "turnabout.cli", *map(str, args)],
        capture_output=True,
        text=True,
        env=env or _env(),
        timeout=timeout,
        **kw,
    )


@pytest.fixture
def no_scan(monkeypatch):
    """Fail the test if any regularity scan starts (a refusal must come before the work)."""
    from turnabout.eversion import regularity

    def boom(*a, **k):
        raise AssertionError("a regularity scan ran before the refusal")

    monkeypatch.setattr(regularity, "scan", boom)
    monkeypatch.setattr(regularity, "_checked", {})


@pytest.fixture
def curves(tmp_path):
    """a: circle, b: ellipse (turning number 1 both), s: limacon with a loop (2), as .npy."""
    from curve_shapes import circle, ellipse, limacon

    out = {}
    for name, pts in (("a", circle(400)), ("b", ellipse(400)), ("s", limacon(400))):
        out[name] = str(tmp_path / f"{name}.npy")
        np.save(out[name], pts)
    return out


@pytest.fixture
def breathing(tmp_path):
    """A sphere that breathes by 10 %: 8 frames that pass every check."""
    p0, faces = round_sphere(10)
    scale = 1.0 + 0.1 * np.sin(np.linspace(0, np.pi, 8))
    return meshseq.write_npz(tmp_path / "breathe.npz", p0[None] * scale[:, None, None], faces)


@pytest.fixture
def pushed(tmp_path):
    """A sphere pushed flat and through itself: frames with a fold, which fail."""
    p0, faces = round_sphere(10)
    pos = np.stack([p0 * np.array([1.0, 1.0, s]) for s in np.linspace(1, -1, 11)])
    return meshseq.write_npz(tmp_path / "push.npz", pos, faces)


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
    assert default_depth(9) == 0.16 and default_depth(10) == 0.15
    assert "0.16 for 8-9 strips, 0.15 above" in depth_help
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


def test_strips_outside_the_working_range_are_refused_up_front_with_that_range(
    capsys, no_scan
):
    t0 = time.perf_counter()
    assert main(["build", "--strips", "64", "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "--strips" in err and "8 to 16" in err and "64" in err
    assert time.perf_counter() - t0 < 2.0


@pytest.mark.slow
@pytest.mark.parametrize("strips, depth", [(8, 0.13), (16, 0.13), (16, 0.16)])
def test_the_documented_range_passes_the_build_gate(strips, depth):
    # the ends of the documented ranges (README: strips 8-16, depth 0.13-0.16) must build
    from turnabout.eversion import MAX_STRIPS, Controls, depth_range
    from turnabout.eversion.regularity import require_regular

    assert MAX_STRIPS == 16 and depth_range(strips) == (0.13, 0.16)
    require_regular(Controls(strips=strips, depth=depth))


def test_a_gate_refusal_states_what_passes_for_the_combination_given():
    from turnabout.eversion import Controls
    from turnabout.eversion.regularity import controls_range_text

    custom = Controls(timing={**Controls().timing, "tuck": (0.6, 0.97)})
    text = " ".join(controls_range_text(custom))
    assert "strips 8-16" in text and "for 8 strips depth 0.13-0.16" in text
    assert "tuck" in text  # names the changed window


# --------------------------------------------------------------------------- outputs


@pytest.mark.parametrize(
    "argv",
    [
        ["--out", "a.txt"],
        ["--format", "obj", "--out", "x.npz"],
        ["--format", "npz", "--out", "x"],
        ["--format", "ply", "--out", "x.obj"],
    ],
)
def test_an_output_name_that_disagrees_with_the_format_is_refused_first(
    tmp_path, monkeypatch, capsys, no_scan, argv
):
    monkeypatch.chdir(tmp_path)
    assert main(["build", *argv, "--quiet"]) == 2
    assert "--out" in capsys.readouterr().err
    assert list(tmp_path.iterdir()) == []


def test_a_folder_output_onto_an_existing_file_is_refused(tmp_path, capsys, no_scan):
    f = tmp_path / "frames"
    f.write_text("keep me")
    assert main(["build", "--format", "obj", "--out", str(f), "--quiet"]) == 2
    assert "existing file" in capsys.readouterr().err
    assert f.read_text() == "keep me"


def test_missing_parent_folders_are_refused_not_created(
    tmp_path, capsys, breathing, curves, no_scan
):
    gone = tmp_path / "no" / "such"
    assert main(["build", "--out", str(gone / "a.npz"), "--quiet"]) == 2
    assert main(["check", str(breathing), "--json", str(gone / "r.json"), "--quiet"]) == 2
    a, b = curves["a"], curves["b"]
    assert main(["curve", "morph", a, b, "--out", str(gone / "m.npz"), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert err.count("does not exist") == 3 and str(gone) in err
    assert not (tmp_path / "no").exists()


def test_a_report_path_that_cannot_be_written_is_refused_before_the_check(
    tmp_path, breathing, monkeypatch, capsys
):
    import turnabout.check as check_pkg

    def boom(*a, **k):
        raise AssertionError("the check ran before the refusal")

    monkeypatch.setattr(check_pkg, "check_animation", boom)
    blocker = tmp_path / "a_file"
    blocker.write_text("")
    bad = blocker / "r.csv"  # a folder that is a file: no one can write here
    assert main(["check", str(breathing), "--csv", str(bad), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "--csv" in err and str(bad) in err and ".part" not in err


def test_reports_are_written_through_a_symlink(tmp_path, breathing):
    target = tmp_path / "real.json"
    target.write_text("old")
    link = tmp_path / "link.json"
    link.symlink_to(target)
    assert main(["check", str(breathing), "--json", str(link), "--quiet"]) == 0
    assert link.is_symlink() and os.readlink(link) == str(target)
    assert json.loads(target.read_text())["verdict"] in ("ok", "warn")


def test_a_report_into_a_fifo_keeps_the_fifo(tmp_path, breathing):
    fifo = tmp_path / "pipe.csv"
    os.mkfifo(fifo)
    got = {}

    def read():
        with open(fifo) as fh:
            got["text"] = fh.read()

    reader = threading.Thread(target=read)
    reader.start()
    assert main(["check", str(breathing), "--csv", str(fifo), "--quiet"]) == 0
    reader.join(30)
    assert got["text"].count("\n") == 9  # header + 8 frames
    assert fifo.is_fifo()


def test_dev_stdout_stays_a_device_and_gets_the_report(breathing):
    # a report to /dev/stdout (here a pipe) is written into it, never renamed over it
    proc = _cli("check", breathing, "--csv", "/dev/stdout", "--quiet")
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.startswith("frame,") and proc.stdout.count("\n") == 9
    assert os.path.islink("/dev/stdout")  # still the link to the process's own stdout


def test_a_dash_writes_the_json_or_csv_report_to_standard_output(breathing, capsys):
    assert main(["check", str(breathing), "--json", "-"]) == 0
    data = json.loads(capsys.readouterr().out)  # the report alone, no summary
    assert len(data["frames"]) == 8
    assert main(["check", str(breathing), "--csv", "-"]) == 0
    assert capsys.readouterr().out.count("\n") == 9
    assert main(["check", str(breathing), "--csv", "-", "--json", "-"]) == 2


def _sources() -> dict[str, str]:
    """Every Python source of the core and the add-on, by path relative to the repository."""
    files = [*(REPO / "core").rglob("*.py"), *(REPO / "addon").glob("*.py")]
    return {p.relative_to(REPO).as_posix(): p.read_text(encoding="utf-8") for p in files}


def test_there_is_one_atomic_writer_one_folder_check_and_one_file_name_sanitiser():
    sources = _sources()
    owner = ["core/turnabout/output.py"]

    def using(pattern: str) -> list[str]:
        return sorted(path for path, text in sources.items() if re.search(pattern, text, re.M))

    assert using(r"^def atomic_write\(") == owner
    # renaming into place, temporary files and write-permission probes: only in the writer
    assert using(r"os\.(replace|rename)\(") == owner
    assert using(r"mkstemp\(") == owner
    assert using(r"os\.access\(") == owner
    assert using(r"isalnum\(\)") == owner
    # and the add-on makes no folder itself
    assert using(r"os\.makedirs\(") == []
    with pytest.raises(output.OutputError, match="does not exist"):
        output.atomic_write_bytes(Path("/nonexistent-folder-xyz/a.bin"), b"x")


# --------------------------------------------------------------------------- same bytes


def test_latitude_derivative_is_the_same_bits_wherever_its_arrays_lie():
    # the cause of the differing builds: with numpy 1.26 a complex-step derivative gave
    # other last bits when its temporaries landed elsewhere in memory (fused multiply-add
    # or not in complex products); the real central difference gives the same bits
    from turnabout.eversion import Controls
    from turnabout.eversion import construction as C

    theta = np.arange(48) * (2 * np.pi / 8 / 48)
    lat = np.linspace(-np.pi / 2, np.pi / 2, 181)[1:-1]
    times = np.linspace(0.1, 0.9, 9)
    ref = [C.jacobian(Controls(), float(t), theta, lat)[2] for t in times]
    rng = np.random.default_rng(0)
    junk = []
    for _ in range(20):
        junk.append(np.empty(int(rng.integers(1, 4000))))  # move where the next arrays lie
        for t, r in zip(times, ref, strict=True):
            assert np.array_equal(C.jacobian(Controls(), float(t), theta, lat)[2], r)


def _busy():
    code = "import numpy as np\nwhile True: np.linalg.svd(np.random.rand(200, 200))"
    return subprocess.Popen([sys.executable, "-c", code], env=_env())


@pytest.mark.slow
def test_builds_are_byte_identical_with_or_without_the_bar_on_any_threads_and_load(tmp_path):
    runs = [
        ("quiet-1", ["--quiet"], {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1"}),
        ("bar-2", [], {"OMP_NUM_THREADS": "2", "OPENBLAS_NUM_THREADS": "2"}),
        ("bar-1", [], {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1"}),
        ("quiet-2-busy", ["--quiet"], {"OMP_NUM_THREADS": "2", "OPENBLAS_NUM_THREADS": "2"}),
    ]
    outs = []
    for name, extra, env in runs:
        busy = _busy() if name.endswith("busy") else None
        try:
            out = tmp_path / f"{name}.npz"
            proc = _cli("build", "--frames", "12", "--out", out, *extra, env=_env(**env))
        finally:
            if busy is not None:
                busy.kill()
                busy.wait()
        assert proc.returncode == 0, proc.stderr
        outs.append(out.read_bytes())
    assert all(o == outs[0] for o in outs[1:])


@pytest.mark.slow
def test_the_default_build_is_byte_identical_with_and_without_the_bar(tmp_path):
    a, b = tmp_path / "a.npz", tmp_path / "b.npz"
    pa = _cli("build", "--out", a, "--quiet", env=_env(OMP_NUM_THREADS="1"))
    pb = _cli("build", "--out", b, env=_env(OMP_NUM_THREADS="2"))
    assert pa.returncode == 0 and pb.returncode == 0, pa.stderr + pb.stderr
    assert a.read_bytes() == b.read_bytes()


def test_curve_morph_writes_the_same_bytes_at_any_time(tmp_path, monkeypatch, curves):
    a, b = curves["a"], curves["b"]
    outs = []
    for k, now in enumerate((1.0e9, 1.7e9)):  # np.savez would stamp these times in the zip
        monkeypatch.setattr(time, "time", lambda now=now: now)
        out = tmp_path / f"m{k}.npz"
        assert main(["curve", "morph", a, b, "--frames", "8", "--out", str(out), "--quiet"]) == 0
        outs.append(out.read_bytes())
    assert outs[0] == outs[1]
    with np.load(tmp_path / "m0.npz", allow_pickle=False) as z:
        assert z["points"].shape[0] == 8


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
    import turnabout.meshseq as ms

    def boom(*a, **k):
        raise AssertionError("the file was read before the refusal")

    monkeypatch.setattr(ms, "read_sequence", boom)
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


# --------------------------------------------------------------------------- cancel, pipes


def _raise_interrupt(*a, **k):
    raise KeyboardInterrupt


@pytest.mark.parametrize(
    "argv, module, attr",
    [
        (["build", "--quiet"], "turnabout.commands.build_command", "build"),
        (["check", "x.npz", "--quiet"], "turnabout.meshseq", "read_sequence"),
        (["curve", "info", "x.svg"], "turnabout.curves.files", "read_curves"),
        (["curve", "morph", "a.svg", "b.svg", "--out", "m.npz"], "turnabout.curves.files",
         "read_curve"),
        (["scene", "x.blend"], "turnabout_blender.blender_commands", "_bpy_or_message"),
        (["render", "x.blend", "out"], "turnabout_blender.blender_commands", "_bpy_or_message"),
        (["demo"], "turnabout_blender.blender_commands", "_bpy_or_message"),
    ],  # fmt: skip
)
def test_ctrl_c_exits_130_with_one_line_in_every_command(
    tmp_path, monkeypatch, capsys, argv, module, attr
):
    import importlib

    monkeypatch.chdir(tmp_path)
    monkeypatch.setattr(importlib.import_module(module), attr, _raise_interrupt)
    if argv[0] == "build":  # get past the checks to the work
        monkeypatch.setattr("turnabout.commands.build_command.mesh_for", lambda *a, **k: None)
        monkeypatch.setattr("turnabout.eversion.regularity.quick_report", lambda *a, **k: None)
    assert main(argv) == 130
    err = capsys.readouterr().err.strip()
    assert err.endswith("cancelled") and len(err.splitlines()) == 1
    assert "Traceback" not in err


@pytest.mark.slow
def test_ctrl_c_during_a_real_build_exits_130_without_a_traceback(tmp_path):
    proc = subprocess.Popen(
        [sys.executable, "-m", "turnabout.cli", "build", "--out", str(tmp_path / "a.npz")],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=_env(),
    )
    time.sleep(4.0)  # inside the regularity check or the build
    proc.send_signal(signal.SIGINT)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 130
    assert "Traceback" not in err and err.rstrip().endswith("turnabout build: cancelled")
    assert not (tmp_path / "a.npz").exists()


def test_a_closed_pipe_ends_quietly(monkeypatch, capsys, curves):
    class ClosedPipe(io.StringIO):
        def write(self, text):
            raise BrokenPipeError(32, "Broken pipe")

    monkeypatch.setattr(sys, "stdout", ClosedPipe())
    monkeypatch.setattr("turnabout.cli._quiet_stdout", lambda: None)
    assert main(["curve", "info", curves["s"]]) == 0
    assert "Traceback" not in capsys.readouterr().err


def test_a_closed_pipe_in_a_shell_pipeline_prints_nothing_on_stderr(tmp_path):
    # many paths, so the output overflows the pipe after head has gone
    rings = "\n".join(
        f'<path d="M {10 + i},0 C {10 + i},5 {5 + i},10 {i},10 C {i - 5},10 {i - 10},5 '
        f'{i - 10},0 C {i - 10},-5 {i - 5},-10 {i},-10 C {5 + i},-10 {10 + i},-5 {10 + i},0 Z"/>'
        for i in range(400)
    )
    svg = tmp_path / "many.svg"
    svg.write_text(f'<svg xmlns="http://www.w3.org/2000/svg">{rings}</svg>')
    proc = subprocess.run(
        ["bash", "-o", "pipefail", "-c",
         f'"{sys.executable}" -m turnabout.cli curve info --samples 64 "{svg}" | head -1'],
        capture_output=True, text=True, env=_env(), timeout=300,
    )  # fmt: skip
    assert proc.stdout.startswith("[0]")
    assert proc.stderr == "" and proc.returncode == 0


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


@pytest.mark.slow
def test_exit_codes_of_build(tmp_path):
    out = tmp_path / "a.npz"
    assert main(["build", "--frames", "2", "--spacing", "even", "--lon", "64", "--lat", "16",
                 "--out", str(out), "--quiet"]) == 0  # fmt: skip
    assert out.is_file()
    assert main(["build", "--strips", "7", "--quiet"]) == 2


@pytest.mark.blender
@pytest.mark.slow
def test_exit_codes_of_scene_render_and_demo_and_render_range(tmp_path):
    env = _env(BLENDER_USER_RESOURCES=str(tmp_path / "user"))
    blend = tmp_path / "shot.blend"
    small = ["--spacing", "even", "--lon", "64", "--lat", "16", "--quiet"]
    p = _cli("scene", blend, "--frames", "6", *small, env=env)
    assert p.returncode == 0, p.stderr
    assert _cli("scene", tmp_path / "x.blend", "--strips", "64", env=env).returncode == 2
    frames = tmp_path / "png"
    p = _cli("render", blend, frames, "--frames", "1,6", "--size", "32x24", "--samples", "2",
             "--quiet", env=env)  # fmt: skip
    assert p.returncode == 0, p.stderr
    assert sorted(os.listdir(frames)) == ["frame_0001.png", "frame_0006.png"]
    assert "Saved:" not in p.stdout and "Saved:" not in p.stderr  # Blender's own prints
    p = _cli("render", blend, frames, "--frames", "99999", "--quiet", env=env)
    assert p.returncode == 2 and "1-6" in p.stderr and "Traceback" not in p.stderr
    assert not (frames / "frame_99999.png").exists()
    # the coarse demo's mesh cannot follow the waves: its verdict fails, exit 1
    p = _cli("demo", "--out", tmp_path / "demo", "--frames", "12", *small, "--previews", "1",
             "--size", "32x24", "--samples", "2", env=env)  # fmt: skip
    assert p.returncode == 1, p.stdout + p.stderr
    assert "verdict:  fail" in p.stdout
    p = _cli("demo", "--out", tmp_path / "no" / "demo", env=env)
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
        env=_env(),
        timeout=600,
    )
    assert proc.returncode == 0, proc.stderr
    assert "validated by Blender's extension validator" in proc.stdout
    assert "blender_ext.py" in proc.stdout and "blender_manifest.toml" in proc.stdout
