"""The sample SVG files in docs/examples and the ``--samples`` option of ``turnabout curve``."""

from __future__ import annotations

import os

import numpy as np
import pytest

from turnabout.cli import main
from turnabout.curves import read_svg_curves, turning_number, whitney_check

REPO = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
SAMPLES = os.path.join(REPO, "docs", "examples")

# (file, turning number, self-crossings): each sample is drawn from a known curve.
# SVG draws <circle> and <rect> clockwise on screen (SVG 1.1, section 9), so -1 in y-up
# coordinates; the figure-eight x = sin t, y = sin t cos t has turning number 0 and one
# crossing; z = e^{it} + (1.6/3) e^{3it} has turning number 3 and two small loops, each one
# crossing (H. Whitney, "On regular closed curves in the plane", Compositio Math. 4, 1937:
# n = mu + sum of crossing signs for a normal curve, mu = +-1 at an outer base point).
KNOWN = [
    ("circle.svg", -1, 0),
    ("rounded_square.svg", -1, 0),
    ("figure_eight.svg", 0, 1),
    ("curl3.svg", 3, 2),
]


def test_every_sample_file_is_listed_here():
    assert sorted(f for f in os.listdir(SAMPLES) if f.endswith(".svg")) == sorted(
        k[0] for k in KNOWN
    )


@pytest.mark.parametrize("name, turning, crossings", KNOWN)
@pytest.mark.parametrize("samples", [16, 1024])
def test_sample_files_have_their_known_turning_numbers_and_crossings(
    name, turning, crossings, samples
):
    (c,) = read_svg_curves(os.path.join(SAMPLES, name), samples=samples)
    assert c.problem == ""
    assert c.points.shape[0] >= samples
    assert turning_number(c.points) == turning
    w = whitney_check(c.points)
    assert w.generic and w.holds and w.crossings.count == crossings


def test_sample_shapes_have_their_drawn_size():
    (circ,) = read_svg_curves(os.path.join(SAMPLES, "circle.svg"), samples=4096)
    assert np.allclose(np.hypot(*(circ.points - [100, -100]).T), 80, rtol=1e-5)
    (sq,) = read_svg_curves(os.path.join(SAMPLES, "rounded_square.svg"), samples=4096)
    length = np.linalg.norm(np.diff(np.vstack([sq.points, sq.points[:1]]), axis=0), axis=1)
    # four straight sides of 160 - 2 * 40 and four quarter circles of radius 40
    assert abs(length.sum() - (4 * 80 + 2 * np.pi * 40)) < 1e-3


@pytest.mark.parametrize("value", ["5", "15", "200001", "many"])
def test_samples_out_of_range_are_refused_with_the_range(value, capsys):
    try:
        code = main(["curve", "info", os.path.join(SAMPLES, "circle.svg"), "--samples", value])
    except SystemExit as e:  # argparse's own refusal
        code = e.code
    assert code == 2
    assert "16-200000" in capsys.readouterr().err


def test_too_coarse_request_is_raised_and_said_so(capsys):
    # formerly 16 samples gave turning number 1 for this curve, with no warning
    assert main(["curve", "info", os.path.join(SAMPLES, "curl3.svg"), "--samples", "16"]) == 0
    out = capsys.readouterr().out
    assert "turning number 3 by total turning" in out
    assert "--samples 16 is too coarse" in out
    assert main(["curve", "info", os.path.join(SAMPLES, "curl3.svg"), "--samples", "4096"]) == 0
    out = capsys.readouterr().out
    assert "4096 points" in out and "too coarse" not in out


def test_morph_between_samples_uses_the_raised_count(tmp_path, capsys):
    out = tmp_path / "m.npz"
    a, b = (os.path.join(SAMPLES, f) for f in ("circle.svg", "rounded_square.svg"))
    args = ["curve", "morph", a, b, "--frames", "6", "--samples", "16", "--out", str(out)]
    assert main([*args, "--quiet"]) == 0
    assert "too coarse" in capsys.readouterr().out
    with np.load(out, allow_pickle=False) as z:
        assert z["points"].shape[1] > 16
        assert np.all(z["turning_number"] == -1)
