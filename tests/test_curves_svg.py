"""Closed curves from SVG files: path data, basic shapes, hidden content, untrusted input.

The reader is numpy and the standard library only; svgpathtools, where installed, serves as
an independent reference for path geometry.
"""

from __future__ import annotations

import sys

import numpy as np
import pytest
from references import require

from turnabout.curves import (
    CurveError,
    curve_from_svg,
    read_svg_curves,
    svg_path_data_curves,
    turning_number,
    whitney_check,
)
from turnabout.curves import svg as svg_module

NS = 'xmlns="http://www.w3.org/2000/svg"'
# a circle of radius 5 drawn with two arcs; sweep-flag 0 runs counter-clockwise on screen
# (SVG 1.1 specification, section 8.3.8: sweep-flag 1 is the "positive-angle" direction,
# which is clockwise on screen because the y axis points down)
CIRCLE_D = "M 0 0 A 5 5 0 1 0 10 0 A 5 5 0 1 0 0 0 Z"
SQUARE_CW_D = "M 0 0 L 10 0 L 10 10 L 0 10 Z"


def svg(body: str) -> bytes:
    return f"<svg {NS}>{body}</svg>".encode()


def polygon_area(points: np.ndarray) -> float:
    """Signed area (shoelace formula), positive for counter-clockwise polygons."""
    x, y = points.T
    return 0.5 * float(np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y))


def usable(curves):
    return [c for c in curves if not c.problem]


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


def test_zero_length_segment_draws_nothing_and_is_dropped():
    # formerly refused as "zero-length segment"; a drawing program may well write one
    c = curve_from_svg(svg('<path d="M 0 0 L 10 0 L 10 0 L 10 10 Z"/>'), samples=300)
    assert turning_number(c) == -1
    assert abs(abs(polygon_area(c)) - 50.0) < 0.5


def test_cusp_is_reported_by_the_users_segments_not_by_sample_numbers():
    # the path runs out to (10, 0) and straight back: the direction reverses
    with pytest.raises(CurveError, match="cusp") as e:
        curve_from_svg(svg('<path d="M 0 0 L 10 0 L 5 0 L 5 5 Z"/>'), samples=200)
    msg = str(e.value)
    assert "segment 1 ('L' (0, 0) to (10, 0))" in msg
    assert "segment 2 ('L' (10, 0) to (5, 0))" in msg
    assert "point" not in msg and "sample" not in msg


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


def test_svg_is_read_without_svgpathtools(monkeypatch):
    monkeypatch.setitem(sys.modules, "svgpathtools", None)
    assert turning_number(curve_from_svg(svg(f'<path d="{CIRCLE_D}"/>'), samples=200)) == 1


# ------------------------------------------------------ paths as drawing programs write them


def test_relative_path_that_closes_up_to_rounding_is_read():
    # 0.1 + 0.2 - 0.3 is 5.6e-17, not 0, in binary floating point: the closing 'z' used to
    # be a zero-length segment and the path was refused
    d = "m 0 0 h 0.1 h 0.2 v 1 h -0.3 v -1 z"
    (c,) = read_svg_curves(svg(f'<path d="{d}"/>'), samples=400)
    assert c.problem == "" and c.closed
    assert turning_number(c.points) == -1  # right, down the screen, left, up: clockwise
    assert abs(abs(polygon_area(c.points)) - 0.3) < 1e-3


def test_second_subpath_after_a_relative_moveto_is_read():
    # after 'z' the current point is the subpath's start, so 'm 1 0' starts at (1, 0)
    d = "m 0 0 h 0.1 h 0.2 v 1 h -0.3 v -1 z m 1 0 h 0.1 h 0.2 v 1 h -0.3 v -1 z"
    curves = read_svg_curves(svg(f'<path d="{d}"/>'), samples=200)
    assert [c.problem for c in curves] == ["", ""]
    assert np.allclose(curves[1].points[:, 0].min(), 1.0, atol=1e-9)
    assert np.allclose(curves[1].points[:, 0].max(), 1.3, atol=1e-9)


def test_short_closing_segment_is_an_ordinary_segment():
    # a closing line of 1e-4 used to give a message about internal sample numbers
    d = "M 0 0 L 1 0 L 1 1 L 0 1 L 0 0.0001 Z"
    c = curve_from_svg(svg(f'<path d="{d}"/>'), samples=64)
    assert turning_number(c) == -1
    # a closing segment that turns back is named as the user wrote it
    with pytest.raises(CurveError) as e:
        curve_from_svg(svg('<path d="M 0 0 L 1 0 L 1 1 L 0 1 L 0 -0.5 Z"/>'))
    assert "segment 5 ('Z' (0, -0.5) to (0, 0))" in str(e.value)
    assert "sample" not in str(e.value)


def test_ends_within_the_drawing_tolerance_are_equal_and_wider_gaps_are_open():
    size = 1000.0
    near = f"M 0 0 L {size} 0 L {size} {size} L 0 {size} L 0 {1e-7 * size}"
    far = f"M 0 0 L {size} 0 L {size} {size} L 0 {size} L 0 {1e-3 * size}"
    near_c, far_c = read_svg_curves(svg(f'<path d="{near}"/><path d="{far}"/>'), samples=64)
    assert near_c.problem == "" and turning_number(near_c.points) == -1
    assert "open path" in far_c.problem and "(0, 1)" in far_c.problem


def test_compact_number_syntax_reads_like_the_spaced_form():
    # SVG 1.1 path grammar (section 8.3.9): arc flags need no separator, a sign or a second
    # decimal point starts a new number, commas and spaces are interchangeable
    pairs = [
        ("M 0 0 A 5 5 0 1 0 10 0 A 5 5 0 1 0 0 0 Z", "M0,0A5,5,0,1010,0A5 5 0 1 0 0 0z"),
        ("M 0 0 L 10 0 L 10 -5.5 L 0.5 -5.5 Z", "M0 0L10 0 10-5.5.5-5.5z"),
    ]
    for spaced, compact in pairs:
        (a,), (b,) = (svg_path_data_curves(d, samples=300) for d in (spaced, compact))
        assert a.problem == b.problem == ""
        assert np.array_equal(a.points, b.points)


def test_path_commands_match_svgpathtools():
    # an independent reader of SVG path data as the reference: every command, absolute
    # and relative, implicit repeats, smooth reflections, arcs with rotation and radii
    # scaled up (SVG 1.1 implementation notes F.6.6)
    spt = require("svgpathtools")
    d = (
        "M 10 10 l 30 0 20 5 H 80 v 20 C 90 40 95 60 80 70 s -20 10 -30 0 "
        "Q 40 60 30 70 t -10 10 A 15 8 30 0 1 0 60 a 2 2 0 0 0 -5 -20 Z"
    )
    c = curve_from_svg(svg(f'<path d="{d}"/>'), samples=20000)
    ref = spt.parse_path(d)
    length = np.linalg.norm(np.diff(np.vstack([c, c[:1]]), axis=0), axis=1).sum()
    assert abs(length - ref.length()) < 1e-4 * ref.length()
    kdtree = require("scipy.spatial").cKDTree
    dense = np.array([ref.point(t) for t in np.linspace(0, 1, 2001)])
    ref_pts = np.stack([dense.real, -dense.imag], axis=1)  # y flipped, as we read
    # distance from each reference point to our polygon (the steps at its nearest vertex)
    _, k = kdtree(c).query(ref_pts)
    n = c.shape[0]
    best = np.full(len(ref_pts), np.inf)
    for a, b in ((k - 1) % n, k), (k, (k + 1) % n):
        ab = c[b] - c[a]
        t = np.clip(((ref_pts - c[a]) * ab).sum(1) / (ab * ab).sum(1), 0, 1)
        best = np.minimum(best, np.linalg.norm(c[a] + t[:, None] * ab - ref_pts, axis=1))
    assert best.max() < 1e-5 * ref.length()


# --------------------------------------------------------------------------------- basic shapes
# SVG 1.1 (W3C Recommendation, 2011), section 9: each shape is its equivalent path, drawn from
# the 3 o'clock point clockwise on screen: turning number -1 once y is flipped.


def test_circle_and_ellipse_are_read_with_their_area_and_length():
    body = '<circle cx="3" cy="4" r="2"/><ellipse cx="10" cy="0" rx="3" ry="1"/>'
    circ, ell = read_svg_curves(svg(body), samples=20000)
    assert turning_number(circ.points) == turning_number(ell.points) == -1
    assert np.allclose(np.hypot(*(circ.points - [3, -4]).T), 2.0, rtol=1e-5)
    assert abs(-polygon_area(circ.points) - np.pi * 4) < 1e-3
    assert abs(-polygon_area(ell.points) - np.pi * 3) < 1e-3
    assert np.allclose(circ.points[0], [5, -4])  # the 3 o'clock point


@pytest.mark.parametrize(
    "attrs, rx, ry",
    [
        ("", 0.0, 0.0),  # square corners
        ('rx="30"', 30.0, 10.0),  # ry takes rx's value, then is clamped to half the height
        ('ry="6"', 6.0, 6.0),  # rx takes ry's value
        ('rx="80" ry="4"', 50.0, 4.0),  # rx clamped to half the width
        ('rx="4" ry="4"', 4.0, 4.0),
    ],
)
def test_rounded_rectangle_follows_the_rx_ry_rules(attrs, rx, ry):
    # area of a w x h rectangle whose corners are quarter ellipses of radii rx, ry:
    # w h - (4 - pi) rx ry (elementary geometry)
    c = curve_from_svg(svg(f'<rect x="1" y="2" width="100" height="20" {attrs}/>'), samples=40000)
    assert turning_number(c) == -1
    assert abs(-polygon_area(c) - (2000 - (4 - np.pi) * rx * ry)) < 0.05
    assert np.allclose([c[:, 0].min(), c[:, 0].max()], [1, 101], atol=1e-3)
    assert np.allclose([c[:, 1].min(), c[:, 1].max()], [-22, -2], atol=1e-3)


def test_polygon_is_closed_and_polyline_is_open_unless_it_returns():
    body = (
        '<polygon points="0,0 10,0 10,10"/><polyline points="0,0 10,0 10,10"/>'
        '<polyline points="0 0 10 0 10 10 0 0"/><polygon points="0,0 10,0 10"/>'
    )
    poly, open_line, closed_line, odd = read_svg_curves(svg(body), samples=300)
    assert poly.problem == "" and turning_number(poly.points) == -1
    assert "open" in open_line.problem and "<polyline>" in open_line.problem
    assert closed_line.problem == "" and turning_number(closed_line.points) == -1
    assert "odd number of coordinates" in odd.problem


def test_shapes_that_are_not_drawn_or_are_malformed_say_so():
    body = '<circle r="0"/><rect width="0" height="5"/><circle r="2" cx="50%"/>'
    with pytest.raises(CurveError, match="percentages"):
        read_svg_curves(svg(body))
    zero_r, zero_w = read_svg_curves(svg('<circle r="0"/><rect width="0" height="5"/>'))
    assert "not drawn" in zero_r.problem and "not drawn" in zero_w.problem
    with pytest.raises(CurveError, match="negative"):
        read_svg_curves(svg('<rect width="-1" height="5"/>'))


def test_transform_applies_to_shapes_as_to_paths():
    body = '<g transform="translate(100 0) scale(2 1)"><circle cx="0" cy="0" r="5"/></g>'
    c = curve_from_svg(svg(body), samples=4000)
    assert np.allclose([c[:, 0].min(), c[:, 0].max()], [90, 110], atol=1e-3)
    assert np.allclose([c[:, 1].min(), c[:, 1].max()], [-5, 5], atol=1e-3)
    mirrored = curve_from_svg(svg('<circle r="5" transform="matrix(-1 0 0 1 0 0)"/>'))
    assert turning_number(mirrored) == 1


# ------------------------------------------------------------------------------- hidden content


def test_content_that_is_not_drawn_is_skipped():
    hidden = (
        '<defs><circle id="d" r="5"/></defs>'
        '<clipPath id="cp"><rect width="5" height="5"/></clipPath>'
        '<mask id="m"><circle r="3"/></mask>'
        '<symbol id="s"><circle r="2"/></symbol>'
        '<circle id="none" r="4" display="none"/>'
        '<g style="fill:red; display: none"><g><circle id="deep" r="4"/></g></g>'
        '<g visibility="hidden"><circle id="ghost" r="4"/>'
        '<circle id="shown" r="6" visibility="visible"/></g>'
        '<circle id="plain" cx="20" r="4"/>'
    )
    curves = read_svg_curves(svg(hidden), samples=64)
    assert [c.id for c in curves] == ["shown", "plain"]


# ------------------------------------------------------------------------------ untrusted input


def test_entity_declarations_are_refused_in_any_encoding():
    laughs = (
        '<?xml version="1.0"?><!DOCTYPE svg [<!ENTITY a "aaaaaaaaaa">'
        '<!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;">]>'
        f'<svg {NS}><path d="M 0 0 L 1 0 L 1 1 Z" id="&b;"/></svg>'
    )
    for data in (
        laughs.encode(),
        laughs.replace('"1.0"?', '"1.0" encoding="UTF-16"?').encode("utf-16"),
    ):
        with pytest.raises(CurveError, match="DOCTYPE or entity"):
            read_svg_curves(data)


def test_messages_name_the_file(tmp_path):
    f = tmp_path / "drawing.svg"
    f.write_bytes(b"<svg><path d='M 0 0 L'/>")
    with pytest.raises(CurveError, match="drawing.svg: not a readable SVG"):
        read_svg_curves(f)
    f.write_bytes(svg('<path id="p" d="M 0 0 L 1 x"/>'))
    with pytest.raises(CurveError, match=r"drawing.svg: path 0 \(id=p\): unreadable path data"):
        read_svg_curves(f)


def test_element_and_segment_counts_are_bounded(monkeypatch):
    monkeypatch.setattr(svg_module, "MAX_SVG_PATHS", 3)
    with pytest.raises(CurveError, match="more than 3 paths"):
        read_svg_curves(svg('<circle r="1"/>' * 4))
    monkeypatch.setattr(svg_module, "MAX_SVG_ELEMENTS", 10)
    with pytest.raises(CurveError, match="more than 10 XML elements"):
        read_svg_curves(svg("<g/>" * 20))
    monkeypatch.setattr(svg_module, "MAX_SEGMENTS", 50)
    d = "M 0 0 " + "l 1 0 " * 60 + "Z"
    with pytest.raises(CurveError, match="more than 50 segments"):
        read_svg_curves(svg(f'<path d="{d}"/>'))
