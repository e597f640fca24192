"""The ``turnabout check`` command: exit codes, reports, and messages for bad input."""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest
from references import require

from turnabout.cli import main
from turnabout.mesh import round_sphere_positions, uniform_sphere_mesh
from turnabout.meshfiles.npz import write_npz
from turnabout.meshfiles.obj import write_obj_sequence


@pytest.fixture(scope="module")
def sphere():
    mesh = uniform_sphere_mesh(24, 12)
    return round_sphere_positions(mesh), mesh.triangles()


@pytest.fixture
def breathing(tmp_path, sphere):
    p0, faces = sphere
    scale = 1.0 + 0.1 * np.sin(np.linspace(0, np.pi, 8))
    return write_npz(tmp_path / "breathe.npz", p0[None] * scale[:, None, None], faces)


@pytest.fixture
def push(tmp_path, sphere):
    p0, faces = sphere
    pos = np.stack([p0 * np.array([1.0, 1.0, s]) for s in np.linspace(1, -1, 11)])
    return write_npz(tmp_path / "push.npz", pos, faces)


def test_passing_animation_exits_zero_and_writes_reports(tmp_path, breathing, capsys):
    mpimg = require("matplotlib.image")  # the 'plot' extra writes the PNG
    out = tmp_path / "out"
    out.mkdir()  # output folders are not created: a typo in a path is refused
    code = main(["check", str(breathing), "--json", str(out / "r.json"),
                 "--csv", str(out / "r.csv"), "--plot", str(out / "r.png")])  # fmt: skip
    assert code == 0
    data = json.loads((out / "r.json").read_text())
    assert data["verdict"] in ("ok", "warn") and data["everted"] is False
    assert (out / "r.csv").read_text().count("\n") == 9
    img = mpimg.imread(out / "r.png")
    assert img.shape == (1232, 880, 4)  # 8 x 11.2 inches at 110 dpi (report.write_plot)
    assert np.sum(np.all(img[..., :3] < 0.1, axis=-1)) > 1000  # the curves and text
    assert "verdict" in capsys.readouterr().out


def test_failing_animation_exits_one_and_names_the_frames(push, capsys):
    assert main(["check", str(push), "--no-intersections"]) == 1
    out = capsys.readouterr().out
    assert "failing frames: " in out and "everted: yes" in out


def test_threshold_options_change_the_verdict(breathing):
    # a 10 % breath moves vertices ~0.1 local edge lengths per frame: forbid that
    assert main(["check", str(breathing), "--jump-warn", "0.01", "--jump-fail", "0.02",
                 "--quiet"]) == 1  # fmt: skip


def test_bad_threshold_is_exit_two(breathing, capsys):
    assert main(["check", str(breathing), "--crease-fail", "10", "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "--crease-warn" in err and "--crease-fail" in err and "crease_warn_deg" not in err


def test_welding_a_mesh_without_duplicates_keeps_every_vertex(tmp_path, sphere):
    # (tests/test_check_report_files.py welds a mesh that has duplicates)
    p0, faces = sphere
    write_obj_sequence(tmp_path / "obj", np.stack([p0, 1.1 * p0]), faces)
    out = tmp_path / "w.json"
    assert main(["check", str(tmp_path / "obj"), "--weld", "--quiet", "--json", str(out)]) == 0
    topo = json.loads(out.read_text())["topology"]
    assert topo["n_vertices"] == len(np.unique(p0, axis=0)) == len(p0)
    assert topo["n_faces"] == len(faces) and topo["euler_characteristic"] == 2


def _garbage(tmp_path, sphere, kind):
    p0, faces = sphere
    path = tmp_path / "bad.npz"
    if kind == "truncated":
        write_npz(path, np.stack([p0, p0]), faces)
        path.write_bytes(path.read_bytes()[:300])
    elif kind == "nan":
        pos = np.stack([p0, p0]).astype(np.float32)
        pos[1, 4, 1] = np.nan
        np.savez(path, positions=pos, faces=faces)
    elif kind == "index":
        np.savez(path, positions=p0[None], faces=faces + len(p0))
    elif kind == "empty":
        path.write_bytes(b"")
    elif kind == "topology":
        path = tmp_path / "frames"
        write_obj_sequence(path, np.stack([p0, p0]), faces)
        f1 = path / "frame_0001.obj"
        f1.write_text(f1.read_text().replace("f 1 3 2\n", "f 1 2 3\n", 1) + "v 0 0 0\n")
    elif kind == "missing":
        path = tmp_path / "nothing.npz"
    return path


@pytest.mark.parametrize(
    ("kind", "words"),
    [
        ("truncated", "truncated"),
        ("nan", "NaN"),
        ("index", "vertex index"),
        ("empty", "empty"),
        ("topology", "same topology"),
        ("missing", "no such file"),
    ],
)
def test_garbage_input_exits_two_with_a_message(tmp_path, sphere, capsys, kind, words):
    path = _garbage(tmp_path, sphere, kind)
    assert main(["check", str(path), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "error" in err and words in err


def test_command_runs_as_a_program(tmp_path, push):
    out = tmp_path / "r.json"
    proc = subprocess.run(
        [sys.executable, "-m", "turnabout.cli", "check", str(push), "--json", str(out)],
        capture_output=True, text=True, timeout=120,
    )  # fmt: skip
    assert proc.returncode == 1, proc.stderr
    assert "verdict: fail" in proc.stdout
    assert json.loads(out.read_text())["verdict"] == "fail"
    bad = tmp_path / "bad.ply"
    bad.write_text("ply\nformat ascii 1.0\nelement vertex 3\n")
    proc = subprocess.run(
        [sys.executable, "-m", "turnabout.cli", "check", str(bad)],
        capture_output=True, text=True, timeout=120,
    )  # fmt: skip
    assert proc.returncode == 2 and "end_header" in proc.stderr


def test_summary_names_counts_causes_and_orientation(push, capsys):
    assert main(["check", str(push), "--no-intersections"]) == 1
    out = capsys.readouterr().out
    # the old summary said only "verdict: fail"
    assert "failing frames: " in out and " of 11 (crease " in out
    assert "orientation: first frame outward" in out and "last frame inward" in out
    assert out.rstrip().endswith("verdict: fail; everted: yes")


def test_torus_degree_is_written_as_zero_not_minus_zero(tmp_path):
    # Hopf: chi(torus) = 0, so its Gauss-map degree is 0 (H. Hopf, 1926); float noise must
    # not make it -0.0 or -4e-17 in the reports
    import surfaces

    p, f = surfaces.torus()
    path = write_npz(tmp_path / "torus.npz", p[None], f)
    out = tmp_path / "t.json"
    assert main(["check", str(path), "--quiet", "--no-intersections", "--json", str(out),
                 "--csv", str(tmp_path / "t.csv")]) == 0  # fmt: skip
    text = out.read_text()
    assert '"degree": 0.0' in text and '"degree": -' not in text
    row = (tmp_path / "t.csv").read_text().splitlines()
    degree = row[1].split(",")[row[0].split(",").index("degree")]
    assert degree == "0"
