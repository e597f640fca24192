"""The ``turnabout curve`` command: info and morph, exit codes, no partial output."""

from __future__ import annotations

import numpy as np
from curve_shapes import circle, ellipse, figure_eight, limacon

from turnabout.cli import main


def save(tmp_path, name, points):
    path = tmp_path / name
    np.save(path, points)
    return str(path)


def test_info_prints_both_turning_numbers_and_whitney(tmp_path, capsys):
    f = save(tmp_path, "limacon.npy", limacon(600))
    assert main(["curve", "info", f]) == 0
    out = capsys.readouterr().out
    assert "turning number 2 by total turning" in out
    assert "turning number 2 by tangent direction" in out
    assert "self-crossings 1" in out and "holds" in out


def test_info_lists_every_svg_path(tmp_path, capsys):
    f = tmp_path / "two.svg"
    f.write_text(
        '<svg xmlns="http://www.w3.org/2000/svg">'
        '<path id="o" d="M 0 0 A 5 5 0 1 0 10 0 A 5 5 0 1 0 0 0 Z"/>'
        '<path id="open" d="M 0 0 L 5 5"/></svg>'
    )
    assert main(["curve", "info", str(f), "--samples", "200"]) == 0
    out = capsys.readouterr().out
    assert "[0] path 0 (id=o)" in out and "turning number 1" in out
    assert "[1] path 1 (id=open): skipped: open path" in out


def test_info_on_unreadable_input_exits_2(tmp_path, capsys):
    bad = tmp_path / "bad.npy"
    bad.write_bytes(b"garbage")
    assert main(["curve", "info", str(bad)]) == 2
    assert "not a readable .npy" in capsys.readouterr().err
    assert main(["curve", "info", save(tmp_path, "wide.npy", np.zeros((10, 3)))]) == 2
    assert main(["curve", "info", str(tmp_path / "none.svg")]) == 2


def test_info_refuses_pickled_npy(tmp_path, capsys):
    f = tmp_path / "obj.npy"
    np.save(f, np.array([{"a": 1}], dtype=object), allow_pickle=True)
    assert main(["curve", "info", str(f)]) == 2
    assert "not a readable .npy" in capsys.readouterr().err  # never unpickled


def test_morph_writes_frames_checks_and_marks(tmp_path, capsys):
    a = save(tmp_path, "a.npy", circle(300))
    b = save(tmp_path, "b.npy", ellipse(300))
    out = tmp_path / "m.npz"
    rc = main(
        ["curve", "morph", a, b, "--frames", "12", "--samples", "256", "--out", str(out), "--quiet"]
    )
    assert rc == 0
    with np.load(out, allow_pickle=False) as z:
        assert z["points"].shape == (12, 256, 2) and z["points"].dtype == np.float64
        assert np.all(z["turning_number"] == 1)
        assert z["min_speed"].min() > 0.5
        assert np.all(z["marks_signed_count"] == 1)
        assert z["marks_xy"].shape == (z["marks_count"].sum(), 2)
    assert "turning number 1" in capsys.readouterr().out


def test_morph_between_different_turning_numbers_exits_1_and_writes_nothing(tmp_path, capsys):
    a = save(tmp_path, "a.npy", circle(300))
    b = save(tmp_path, "b.npy", figure_eight(300))
    out = tmp_path / "m.npz"
    assert main(["curve", "morph", a, b, "--out", str(out), "--quiet"]) == 1
    err = capsys.readouterr().err
    assert "turning number 1" in err and "turning number 0" in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["a.npy", "b.npy"]


def test_morph_with_unreadable_input_exits_2(tmp_path):
    a = save(tmp_path, "a.npy", circle(300))
    assert (
        main(["curve", "morph", a, str(tmp_path / "b.npy"), "--out", str(tmp_path / "m.npz")]) == 2
    )
    nan = circle(300)
    nan[3] = np.nan
    b = save(tmp_path, "nan.npy", nan)
    assert main(["curve", "morph", a, b, "--out", str(tmp_path / "m.npz")]) == 2
    assert not (tmp_path / "m.npz").exists()
