"""Closed curves from SVG path data (svgpathtools behind the 'svg' extra)."""

from __future__ import annotations

import sys

import numpy as np
import pytest
from turnabout.curves import (
    CurveError,
    curve_from_svg,
    read_svg_curves,
    turning_number,
    whitney_check,
)
from turnabout.curves import svg as svg_module

pytest.importorskip("svgpathtools")

NS = 'xmlns="http://www.w3.org/2000/svg"'
# a circle of radius 5 drawn with two arcs; sweep-flag 0 runs counter-clockwise on screen
# (SVG 1.1 specification, section 8.3.8: sweep-flag 1 is the "positive-angle" direction,
# which is clockwise on screen because the y axis points down)
CIRCLE_D = "M 0 0 A 5 5 0 1 0 10 0 A 5 5 0 1 0 0 0 Z"
SQUARE_CW_D = "M 0 0 L 10 0 L 10 10 L 0 10 Z"


def svg(body: str) -> bytes:
    return f"<svg {NS}>{body}</svg>".encode()


def test_counter_clockwise_circle_on_screen_has_turning_number_plus_one():
    c = curve_from_svg(svg(f'<path d="{CIRCLE_D}"/>'), samples=400)
    assert turning_number(c) == 1
    assert np.allclose(np.hypot(*(c - c.mean(axis=0)).T), 5.0, rtol=1e-4)


def test_square_drawn_clockwise_on_screen_has_turning_number_minus_one():
    # right, then down the screen, then left: clockwise as seen
    assert turning_number(curve_from_svg(svg(f'<path d="{SQUARE_CW_D}"/>'), samples=400)) == -1


def test_mirroring_transform_flips_the_turning_number():
    body = f'<g transform="scale(-1 1)"><path d="{CIRCLE_D}"/></g>'
    assert turning_number(curve_from_svg(svg(body), samples=400)) == -1
    moved = f'<g transform="translate(100 50) rotate(30)"><path d="{CIRCLE_D}"/></g>'
    c = curve_from_svg(svg(moved), samples=400)
    assert turning_number(c) == 1 and np.linalg.norm(c.mean(axis=0)) > 50


def test_curve_with_a_loop_from_cubic_segments_turns_twice():
    # top, right, bottom of the screen (clockwise as seen), then a small loop turning the
    # same way before the left side: like a limacon with an inner loop, clockwise, so -2
    # (Whitney 1937: mu = -1 on the outer boundary, one crossing of sign -1)
    d = (
        "M 0 -10 C 8 -10 10 -4 10 0 C 10 6 4 10 0 10 C -3 10 -4 6 -2 4 "
        "C 0 2 3 4 2 6 C 1 8 -6 10 -10 0 C -10 -6 -6 -10 0 -10 Z"
    )
    c = curve_from_svg(svg(f'<path d="{d}"/>'), samples=1500)
    assert turning_number(c) == -2
    w = whitney_check(c)
    assert (w.mu, w.crossings.count, w.whitney_value) == (-1, 1, -2)


def test_several_closed_paths_are_refused_until_one_is_chosen():
    body = f'<path id="round" d="{CIRCLE_D}"/><path id="box" d="{SQUARE_CW_D}"/>'
    with pytest.raises(CurveError, match="2 closed paths; choose one") as e:
        curve_from_svg(svg(body))
    assert "id=round" in str(e.value) and "id=box" in str(e.value)
    assert turning_number(curve_from_svg(svg(body), select="box", samples=200)) == -1
    assert turning_number(curve_from_svg(svg(body), select=0, samples=200)) == 1


def test_subpaths_of_one_path_are_listed_separately():
    d = f"{CIRCLE_D} M 20 20 L 30 20 L 30 30 Z"
    curves = read_svg_curves(svg(f'<path id="two" d="{d}"/>'), samples=100)
    assert [c.label for c in curves] == ["path 0 (id=two) subpath 0", "path 0 (id=two) subpath 1"]


def test_open_path_is_reported_as_open():
    with pytest.raises(CurveError, match="open path"):
        curve_from_svg(svg('<path d="M 0 0 L 10 0 L 10 10"/>'))


def test_zero_length_segment_is_reported():
    with pytest.raises(CurveError, match="zero-length segment"):
        curve_from_svg(svg('<path d="M 0 0 L 10 0 L 10 0 L 10 10 Z"/>'))


def test_cusp_is_reported():
    # the path runs out to (10, 0) and straight back: the direction reverses
    with pytest.raises(CurveError, match="cusp"):
        curve_from_svg(svg('<path d="M 0 0 L 10 0 L 5 0 L 5 5 Z"/>'), samples=200)


@pytest.mark.parametrize(
    "data, message",
    [
        (b"not xml at all <<<", "not a readable SVG"),
        (b"<html></html>", "not an SVG file"),
        (svg('<path d="M 0 0 L foo"/>'), "unreadable path data"),
        (svg('<path transform="rotate(" d="M 0 0 L 1 0 L 1 1 Z"/>'), "unreadable transform"),
        (
            b'<?xml version="1.0"?><!DOCTYPE svg [<!ENTITY a "aaaa">]><svg/>',
            "DOCTYPE or entity",
        ),
    ],
)
def test_unreadable_svg_gives_a_clear_message(data, message):
    with pytest.raises(CurveError, match=message):
        read_svg_curves(data)


def test_large_files_are_refused_before_reading(tmp_path, monkeypatch):
    monkeypatch.setattr(svg_module, "MAX_SVG_BYTES", 100)
    f = tmp_path / "big.svg"
    f.write_bytes(svg(f'<path d="{CIRCLE_D}"/>' * 5))
    with pytest.raises(CurveError, match="at most 100"):
        read_svg_curves(f)


def test_missing_file_is_reported(tmp_path):
    with pytest.raises(CurveError, match="cannot read SVG file"):
        read_svg_curves(tmp_path / "absent.svg")


def test_missing_svg_extra_gives_install_hint(monkeypatch):
    monkeypatch.setitem(sys.modules, "svgpathtools", None)
    with pytest.raises(CurveError, match="'svg' extra"):
        read_svg_curves(svg(f'<path d="{CIRCLE_D}"/>'))
