"""The *Tuned Values* button beside *Strips*, pressed as a user presses it (through the
registered operator): it fills depth, stage windows and frames from the core's documented
values for the strip count, leaves every other setting alone, is one undo step, refuses a
strip count outside the table, and a build from the panel then carries those controls.

Expected values are computed here from the core's three public functions
(``default_depth``, ``default_frames``, ``Controls(strips=n).timing``), never written out,
so the tests hold whatever the core's table says.
"""

from __future__ import annotations

import json

import pytest
from blender_support import (
    blank,  # noqa: F401  (fixture used by name)
    bpy,
    counts,
)

from turnabout.eversion import controls as core

pytestmark = pytest.mark.blender

WINDOWS = tuple(f"{stage}_{end}" for stage in core.STAGE_NAMES for end in ("start", "end"))
FILLED = ("auto_depth", "depth", "frames") + WINDOWS
LEFT_ALONE = ("frame_start", "key_step", "mesh_lon", "mesh_lat", "mesh_spacing", "bake_mode",
              "memory_limit_mb", "check_start", "check_end")  # fmt: skip

# the panel stores floats in single precision
F32 = 1e-6


def _expected(strips: int) -> dict:
    out = {
        "auto_depth": True,
        "depth": core.default_depth(strips),
        "frames": core.default_frames(strips),
    }
    for stage, (a, b) in core.Controls(strips=strips).timing.items():
        out[f"{stage}_start"], out[f"{stage}_end"] = a, b
    return out


def _read(s, names) -> dict:
    return {name: getattr(s, name) for name in names}


def _panel_timing(s) -> dict:
    return {st: (getattr(s, f"{st}_start"), getattr(s, f"{st}_end")) for st in core.STAGE_NAMES}


def _untuned_panel(s, strips: int) -> None:
    """A panel a user has moved away from the tuned values, in every filled setting and in
    the ones the button must leave alone."""
    s.strips = strips
    s.auto_depth, s.depth, s.frames = False, 0.135, 7
    shifted = {st: (0.02 * i, 0.5 + 0.1 * i) for i, st in enumerate(core.STAGE_NAMES)}
    for st, (a, b) in shifted.items():
        setattr(s, f"{st}_start", a)
        setattr(s, f"{st}_end", b)
    s.frame_start, s.key_step = 5, 3
    s.mesh_lon, s.mesh_lat, s.mesh_spacing = 8 * strips, 16, "EVEN"
    s.memory_limit_mb, s.check_start, s.check_end = 512.0, 2, 9
    core.Controls(strips=strips, depth=s.depth, timing=_panel_timing(s))  # a valid start


@pytest.mark.usefixtures("blank")
def test_the_button_is_an_undoable_registered_operator():
    from turnabout_blender.tuned_controls import TURNABOUT_OT_use_tuned_controls as op

    assert {"REGISTER", "UNDO"} <= op.bl_options
    assert hasattr(bpy.ops.turnabout, "use_tuned_controls")
    assert bpy.ops.turnabout.use_tuned_controls.get_rna_type().name == "Tuned Values"


@pytest.mark.parametrize("strips", [8, 12, 16])
@pytest.mark.usefixtures("blank")
def test_the_button_fills_depth_windows_and_frames_from_the_core_for_the_strip_count(strips, capfd):
    s = bpy.context.scene.turnabout
    _untuned_panel(s, strips)
    others = _read(s, LEFT_ALONE)
    before = counts()
    capfd.readouterr()
    assert bpy.ops.turnabout.use_tuned_controls() == {"FINISHED"}

    want = _expected(strips)
    assert _read(s, FILLED) == pytest.approx(want, rel=F32)
    assert s.strips == strips
    assert _read(s, LEFT_ALONE) == others  # mesh, storage, key step, start frame, check range
    assert counts() == before  # settings only: no data made, frame unchanged
    said = capfd.readouterr()
    line = f"{strips} strips: depth {want['depth']:g}, {want['frames']} frames"
    assert line in said.out + said.err

    # independently of the button: the core accepts what the panel now holds (with
    # *Default depth* on, a build takes the core's depth itself, not its float32 copy)
    timing = _panel_timing(s)
    core.validate(core.Controls(strips=strips, depth=None, timing=timing))
    lo, hi = core.depth_range()
    assert lo - F32 <= s.depth <= hi + F32 and s.frames >= 2


@pytest.mark.parametrize("strips", [8, 12, 16])
@pytest.mark.usefixtures("blank")
def test_a_build_after_the_button_records_the_tuned_controls(strips):
    s = bpy.context.scene.turnabout
    _untuned_panel(s, strips)
    assert bpy.ops.turnabout.use_tuned_controls() == {"FINISHED"}
    frames = s.frames
    s.key_step = frames // 4  # a few stored shapes keep the bake small; not a tuned control
    assert bpy.ops.turnabout.add_eversion() == {"FINISHED"}
    ob = bpy.context.active_object
    record = json.loads(ob["turnabout"])

    want = _expected(strips)
    c = record["controls"]
    assert c["strips"] == strips
    assert c["depth"] == pytest.approx(want["depth"], rel=F32)
    got = {f"{st}_{e}": c["timing"][st][i] for st in core.STAGE_NAMES
           for i, e in enumerate(("start", "end"))}  # fmt: skip
    # the panel's single-precision copies are read back as the core's decimals, exactly
    assert got == {k: want[k] for k in WINDOWS}
    assert record["frames"] == want["frames"]
    scene = bpy.context.scene
    assert (scene.frame_start, scene.frame_end) == (5, 5 + want["frames"] - 1)


@pytest.mark.parametrize("end", [0, 1])
@pytest.mark.usefixtures("blank")
def test_a_depth_typed_at_either_end_of_the_range_builds(end):
    # Blender keeps 0.13 as 0.12999999523 (single precision); the core's range is inclusive
    from turnabout_blender.props import controls_from_settings

    s = bpy.context.scene.turnabout
    s.auto_depth, s.depth = False, core.depth_range()[end]
    assert s.depth != core.depth_range()[end]  # not exact in single precision
    assert controls_from_settings(s).depth == core.depth_range()[end]
    s.frames, s.key_step, s.mesh_lon, s.mesh_lat = 8, 4, 64, 16
    assert bpy.ops.turnabout.add_eversion() == {"FINISHED"}
    record = json.loads(bpy.context.active_object["turnabout"])
    assert record["controls"]["depth"] == core.depth_range()[end]


@pytest.mark.usefixtures("blank")
def test_undo_puts_every_filled_setting_back_in_one_step():
    s = bpy.context.scene.turnabout
    _untuned_panel(s, 12)
    old = _read(s, FILLED)
    bpy.ops.ed.undo_push(message="panel set by hand")
    assert bpy.ops.turnabout.use_tuned_controls() == {"FINISHED"}
    bpy.ops.ed.undo_push(message="tuned values")
    tuned = _read(bpy.context.scene.turnabout, FILLED)
    assert tuned == pytest.approx(_expected(12), rel=F32)

    bpy.ops.ed.undo()
    s = bpy.context.scene.turnabout  # references from before the undo are stale
    assert _read(s, FILLED) == old  # all of them, by one undo
    bpy.ops.ed.redo()
    assert _read(bpy.context.scene.turnabout, FILLED) == tuned


@pytest.mark.parametrize("stored", [7, 40])
@pytest.mark.usefixtures("blank")
def test_a_strip_count_outside_the_table_is_refused_and_changes_nothing(stored):
    s = bpy.context.scene.turnabout
    _untuned_panel(s, 12)
    s["strips"] = stored  # past the property's limits, as a script or an older file can leave it
    assert s.strips == stored
    panel = _read(s, FILLED + LEFT_ALONE)
    with pytest.raises(RuntimeError) as err:
        bpy.ops.turnabout.use_tuned_controls()
    message = str(err.value)
    assert "Strips" in message and str(stored) in message
    assert f"{core.MIN_STRIPS} to {core.MAX_STRIPS}" in message
    assert "Traceback" not in message
    assert _read(s, FILLED + LEFT_ALONE) == panel


@pytest.mark.usefixtures("blank")
def test_the_button_reads_the_core_at_each_press(monkeypatch):
    # a core whose table says otherwise: the button must follow it, not numbers of its own
    lo, hi = core.depth_range()
    monkeypatch.setattr(core, "default_depth", lambda n: lo + (hi - lo) * (n - 8) / 8)
    monkeypatch.setattr(core, "default_frames", lambda n: 100 + n)
    s = bpy.context.scene.turnabout
    _untuned_panel(s, 10)
    assert bpy.ops.turnabout.use_tuned_controls() == {"FINISHED"}
    assert s.depth == pytest.approx(lo + (hi - lo) * 2 / 8, rel=F32)
    assert s.frames == 110
