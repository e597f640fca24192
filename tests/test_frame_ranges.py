"""Frame selections: the ``--frames`` syntax, the range a check runs over, rendered names."""

from __future__ import annotations

import os

import pytest

from turnabout.frame_ranges import FrameRangeError, frame_path, frames_to_check, parse_frames


@pytest.mark.parametrize(
    "spec, want",
    [
        ("7", [7]),
        ("1-120:10", list(range(1, 121, 10))),
        ("1,5,9", [1, 5, 9]),
        ("1-3, 2-4", [1, 2, 3, 4]),  # overlaps once, sorted
        ("9,1-2", [1, 2, 9]),
        (" 3 - 6:2 ", [3, 5]),
        ("-2-1", [-2, -1, 0, 1]),
    ],
)
def test_frame_selections_read_as_python_ranges_would(spec, want):
    assert parse_frames(spec) == want


def test_no_selection_means_the_files_whole_range():
    assert parse_frames("", (4, 9)) == list(range(4, 10))
    assert parse_frames(None, (4, 9)) == list(range(4, 10))


@pytest.mark.parametrize(
    "spec, default, message",
    [
        ("9-3", None, "'9-3' is empty \\(end before start\\)"),
        ("one", None, "cannot read 'one'; use N, A-B or A-B:STEP"),
        ("1-5:0", None, "step must be at least 1 in '1-5:0'"),
        ("1-5:", None, "cannot read"),
        ("0-5", (1, 10), "reaches outside the file's frame range 1-10"),
        ("5-11", (1, 10), "give frames from 1 to 10"),
        ("", None, "give frames like 1-120"),
    ],
)
def test_a_bad_selection_is_refused_naming_the_option(spec, default, message):
    with pytest.raises(FrameRangeError, match="^--frames: .*" + message):
        parse_frames(spec, default)


def test_a_check_runs_over_the_scene_range_or_the_chosen_one():
    assert frames_to_check(1, 250) == (1, 250)
    assert frames_to_check(1, 250, (10, 20)) == (10, 20)
    assert frames_to_check(5, 5, (3, 4)) == (3, 4)  # the chosen range wins


@pytest.mark.parametrize(
    "scene, chosen, message",
    [
        ((1, 250), (20, 10), "20-10 is empty"),
        ((1, 250), (7, 7), "7-7 has one frame; checking motion needs two or more"),
        ((3, 3), None, "3-3 has one frame"),
    ],
)
def test_an_empty_or_single_frame_check_range_is_refused(scene, chosen, message):
    with pytest.raises(FrameRangeError, match="^frame range: " + message):
        frames_to_check(*scene, chosen)


def test_rendered_frames_are_named_in_frame_order():
    assert frame_path("out", 7) == os.path.join("out", "frame_0007.png")
    assert frame_path("out", 12345) == os.path.join("out", "frame_12345.png")
    names = [os.path.basename(frame_path("o", f)) for f in (1, 2, 10, 100, 1000)]
    assert names == sorted(names)
