"""The command line as a user meets it, part 2: outputs, same bytes, cancelling and pipes.

Each test reproduces a reported misbehaviour and checks the fixed behaviour. Exit codes
follow README.md, "Exit codes": 0 success, 1 the verdict fails or a homotopy is impossible,
2 bad input or an unwritable output, 130 cancelled. Shared helpers: tests/cli_support.py;
the fixtures (breathing, pushed, curves, no_scan): tests/conftest.py.
(Part 1, one vocabulary, early refusals and exit codes: tests/test_cli_options.py.)
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
from pathlib import Path

import numpy as np
import pytest
from cli_support import REPO, cli_env, run_cli

from turnabout import output
from turnabout.cli import main

IMPORTS_ATOMIC_WRITE = r"^\s*from (\S+) import [^\n]*\batomic_write"

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
    proc = run_cli("check", breathing, "--csv", "/dev/stdout", "--quiet")
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
    # and it is imported from there, never through another module
    imported_from = {
        m for text in sources.values() for m in re.findall(IMPORTS_ATOMIC_WRITE, text, re.M)
    }
    assert imported_from and all(m.endswith("output") for m in imported_from), imported_from
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
    return subprocess.Popen([sys.executable, "-c", code], env=cli_env())


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
            proc = run_cli("build", "--frames", "12", "--out", out, *extra, env=cli_env(**env))
        finally:
            if busy is not None:
                busy.kill()
                busy.wait()
        assert proc.returncode == 0, proc.stderr
        outs.append(out.read_bytes())
    assert all(o == outs[0] for o in outs[1:])


def test_the_default_build_is_byte_identical_with_and_without_the_bar(tmp_path):
    a, b = tmp_path / "a.npz", tmp_path / "b.npz"
    pa = run_cli("build", "--out", a, "--quiet", env=cli_env(OMP_NUM_THREADS="1"))
    pb = run_cli("build", "--out", b, env=cli_env(OMP_NUM_THREADS="2"))
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


# --------------------------------------------------------------------------- cancel, pipes


def _raise_interrupt(*a, **k):
    raise KeyboardInterrupt


@pytest.mark.parametrize(
    "argv, module, attr",
    [
        (["build", "--quiet"], "turnabout.commands.build_command", "build"),
        (["check", "x.npz", "--quiet"], "turnabout.meshfiles", "read_sequence"),
        (["curve", "info", "x.svg"], "turnabout.curves.files", "read_curves"),
        (
            ["curve", "morph", "a.svg", "b.svg", "--out", "m.npz"],
            "turnabout.curves.files",
            "read_curve",
        ),
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


def test_ctrl_c_during_a_real_build_exits_130_without_a_traceback(tmp_path):
    proc = subprocess.Popen(
        [sys.executable, "-m", "turnabout.cli", "build", "--out", str(tmp_path / "a.npz")],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=cli_env(),
        # as from a terminal: a shell that starts this run in the background ignores SIGINT,
        # and a child that inherits that ignores Ctrl-C too
        preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL),
    )
    # interrupt once the regularity check's bar has started (a scan of some seconds), not
    # after a fixed delay: on a fast machine the whole build can end within a few seconds
    seen, deadline = "", time.monotonic() + 120
    while "regularity check" not in seen and time.monotonic() < deadline:
        ch = proc.stderr.read(1)
        if not ch:
            break
        seen += ch
    assert "regularity check" in seen, seen
    proc.send_signal(signal.SIGINT)
    _, rest = proc.communicate(timeout=60)
    err = seen + rest
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
        capture_output=True, text=True, env=cli_env(), timeout=300,
    )  # fmt: skip
    assert proc.stdout.startswith("[0]")
    assert proc.stderr == "" and proc.returncode == 0
