"""Plane curves in Blender: reading curve objects, the panel's turning number, the morphing wall."""

from __future__ import annotations

import json

import numpy as np
import pytest
from blender_support import (
    blank,  # noqa: F401  (fixture used by name)
    bpy,
    counts,
    evaluated_positions,
)

from turnabout.curves import (
    bezier_segments_from_knots,
    curve_from_bezier_segments,
    curve_from_polyline,
    marks_per_frame,
    regular_homotopy,
    turning_number,
)
from turnabout.curves.wall import mark_beads, wall_height_for, wall_positions

pytestmark = pytest.mark.blender

# Bezier handle length for a quarter circle, 4/3 tan(pi/8) (common practice)
KAPPA = 4 / 3 * np.tan(np.pi / 8)


def _link(name, cu):
    ob = bpy.data.objects.new(name, cu)
    bpy.context.scene.collection.objects.link(ob)
    return ob


def _bezier_knots(centre=(0.0, 0.0), rx=1.0, ry=1.0, ccw=True, lift=0.0):
    """Four knots and handles of an axis-aligned ellipse, counter-clockwise unless told."""
    ang = np.arange(4) * np.pi / 2
    if not ccw:
        ang = -ang
    c = np.array(centre)
    co = c + np.stack([rx * np.cos(ang), ry * np.sin(ang)], 1)
    tangent = np.stack([-rx * np.sin(ang), ry * np.cos(ang)], 1) * (1 if ccw else -1)
    # the tangent of an axis-aligned ellipse at its vertices has the length of the other axis
    right = co + KAPPA * tangent
    left = co - KAPPA * tangent
    z = np.zeros((4, 1))
    zl = z.copy()
    zl[0] = lift  # lifts one handle off the plane when asked
    return (
        np.hstack([co, z]),
        np.hstack([left, zl]),
        np.hstack([right, z]),
    )


def bezier_object(name, co, left, right, cyclic=True):
    cu = bpy.data.curves.new(name, "CURVE")
    cu.dimensions = "3D"
    sp = cu.splines.new("BEZIER")
    sp.bezier_points.add(len(co) - 1)
    sp.bezier_points.foreach_set("co", np.asarray(co, np.float32).ravel())
    sp.bezier_points.foreach_set("handle_left", np.asarray(left, np.float32).ravel())
    sp.bezier_points.foreach_set("handle_right", np.asarray(right, np.float32).ravel())
    for bp in sp.bezier_points:
        bp.handle_left_type = bp.handle_right_type = "FREE"
    sp.use_cyclic_u = cyclic
    return _link(name, cu)


def poly_object(name, xyz, cyclic=True, splines=1):
    cu = bpy.data.curves.new(name, "CURVE")
    cu.dimensions = "3D"
    for i in range(splines):
        sp = cu.splines.new("POLY")
        sp.points.add(len(xyz) - 1)
        co = np.hstack([np.asarray(xyz) + [3.0 * i, 0, 0], np.ones((len(xyz), 1))])
        sp.points.foreach_set("co", co.astype(np.float32).ravel())
        sp.use_cyclic_u = cyclic
    return _link(name, cu)


def limacon_xyz(n=160, b=0.5):
    """Limacon r = b + cos t, with an inner loop for 0 < b < 1."""
    t = 2 * np.pi * (np.arange(n) + 1 / 3) / n
    r = b + np.cos(t)
    return np.stack([r * np.cos(t), r * np.sin(t), np.zeros(n)], 1)


def core_bezier(co, left, right, samples):
    """The core's curve for the same control points, read without the add-on."""
    seg = bezier_segments_from_knots(co[:, :2], left[:, :2], right[:, :2], closed=True)
    return curve_from_bezier_segments(seg, closed=True, samples=samples)


def select(source, target):
    for o in bpy.context.view_layer.objects:
        o.select_set(False)
    source.select_set(True)
    target.select_set(True)
    bpy.context.view_layer.objects.active = target


class _Recorder:
    """Stands in for a panel layout and records the label texts drawn on it."""

    def __init__(self, texts):
        self.texts = texts
        self.enabled = True

    def label(self, text="", icon="NONE"):
        self.texts.append(text)

    def column(self, **kw):
        return self

    row = box = column

    def separator(self, **kw):
        pass

    def prop(self, *a, **kw):
        pass

    def operator(self, *a, **kw):
        return self


def panel_texts():
    from turnabout_blender.curves_panel import TURNABOUT_PT_curves

    texts: list[str] = []

    class Panel:
        layout = _Recorder(texts)

    TURNABOUT_PT_curves.draw(Panel(), bpy.context)
    return texts


def shoelace_area(pts):
    """Signed area of a polygon (positive when counter-clockwise; handbook formula)."""
    x, y = pts[:, 0], pts[:, 1]
    return 0.5 * float(np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y))


# ----------------------------------------------------------------------------- turning number


@pytest.mark.usefixtures("blank")
def test_panel_shows_turning_number_of_bezier_circles_plus_or_minus_one_by_orientation():
    from turnabout_blender.curve_input import curve_points_of_object

    # Hopf, "Ueber die Drehung der Tangenten und Sehnen ebener Kurven", Compositio Math.
    # 1935 (Umlaufsatz): a simple closed curve has turning number +1 when traversed
    # counter-clockwise and -1 when traversed clockwise.
    bpy.ops.curve.primitive_bezier_circle_add(radius=1.5)
    prim = bpy.context.active_object
    ccw = bezier_object("round", *_bezier_knots(rx=1.0, ry=1.0, ccw=True))
    cw = bezier_object("round cw", *_bezier_knots(rx=1.0, ry=1.0, ccw=False))
    dg = bpy.context.evaluated_depsgraph_get()
    for ob in (prim, ccw, cw):
        pts = curve_points_of_object(ob, dg, samples=256)
        expected = 1 if shoelace_area(pts) > 0 else -1
        assert turning_number(pts) == expected
        bpy.context.view_layer.objects.active = ob
        texts = panel_texts()
        assert f"{ob.name}: turning number {expected}" in texts, texts
        # the direction count (second method) is drawn too and agrees
        assert any(t.endswith(f"= {expected}") for t in texts), texts
    assert shoelace_area(curve_points_of_object(ccw, dg, samples=64)) > 0
    assert shoelace_area(curve_points_of_object(cw, dg, samples=64)) < 0


@pytest.mark.usefixtures("blank")
def test_panel_shows_two_for_a_limacon_with_an_inner_loop():
    # handbook value: the limacon with an inner loop turns twice; Whitney, "On regular closed
    # curves in the plane", 1937: mu + crossing sign = 1 + 1
    xyz = limacon_xyz()
    ob = poly_object("loop", xyz)
    bpy.context.view_layer.objects.active = ob
    core = turning_number(curve_from_polyline(xyz[:, :2], samples=256))
    assert core == 2
    assert "loop: turning number 2" in panel_texts()


@pytest.mark.usefixtures("blank")
def test_panel_names_what_is_wrong_instead_of_a_number():
    lifted = limacon_xyz()
    lifted[10, 2] = 0.4
    ob = poly_object("bent", lifted)
    bpy.context.view_layer.objects.active = ob
    texts = panel_texts()
    assert any("not planar" in t for t in texts) and not any("turning number" in t for t in texts)


# ----------------------------------------------------------------------------- refusals


@pytest.mark.usefixtures("blank")
@pytest.mark.parametrize(
    ("make", "words"),
    [
        (lambda: poly_object("open", limacon_xyz(), cyclic=False), "is open"),
        (lambda: bezier_object("lifted", *_bezier_knots(lift=0.3)), "not planar"),
        (lambda: poly_object("pair", limacon_xyz(), splines=2), "has 2 splines"),
        (lambda: _link("plain", bpy.data.meshes.new("plain")), "is a mesh, not a curve"),
    ],
)
def test_unreadable_curves_are_refused_naming_the_problem_and_nothing_is_made(make, words):
    good = bezier_object("good", *_bezier_knots())
    bad = make()
    before = counts()
    for source, target in ((bad, good), (good, bad)):
        select(source, target)
        with pytest.raises(RuntimeError, match=words) as info:
            bpy.ops.turnabout.curve_homotopy()
        assert repr(bad.name) in str(info.value)
        assert counts() == before


@pytest.mark.usefixtures("blank")
def test_circle_to_loop_is_refused_with_both_turning_numbers_and_the_file_unchanged():
    # Whitney, "On regular closed curves in the plane", Compositio Math. 1937 (Whitney-
    # Graustein): the turning number is invariant under regular homotopy
    circle = bezier_object("circle", *_bezier_knots())
    loop = poly_object("loop", limacon_xyz())
    select(circle, loop)
    before = counts()
    selected = sorted(o.name for o in bpy.context.selected_objects)
    with pytest.raises(RuntimeError) as info:
        bpy.ops.turnabout.curve_homotopy()
    msg = str(info.value)
    assert "circle (turning number 1)" in msg and "loop (turning number 2)" in msg
    assert counts() == before
    assert sorted(o.name for o in bpy.context.selected_objects) == selected


@pytest.mark.usefixtures("blank")
def test_one_selected_curve_is_not_enough():
    circle = bezier_object("circle", *_bezier_knots())
    for o in bpy.context.view_layer.objects:
        o.select_set(False)
    circle.select_set(True)
    bpy.context.view_layer.objects.active = circle
    with pytest.raises(RuntimeError, match="select two curve objects"):
        bpy.ops.turnabout.curve_homotopy()


# ----------------------------------------------------------------------------- the wall


def _morph(frames=12, frame_start=3, samples=128, marks=True):
    knots_a = _bezier_knots(rx=1.0, ry=1.0)
    knots_b = _bezier_knots(centre=(0.4, -0.2), rx=1.8, ry=0.6)
    a = bezier_object("start", *knots_a)
    b = bezier_object("end", *knots_b)
    s = bpy.context.scene.turnabout_curves
    s.frames, s.frame_start, s.samples, s.show_marks = frames, frame_start, samples, marks
    select(a, b)
    assert bpy.ops.turnabout.curve_homotopy() == {"FINISHED"}
    return bpy.context.active_object, knots_a, knots_b, s


@pytest.mark.usefixtures("blank")
def test_wall_plays_the_core_positions_at_every_frame():
    wall, knots_a, knots_b, s = _morph(frames=12, frame_start=3, samples=128)
    a = core_bezier(*knots_a, samples=128)
    b = core_bezier(*knots_b, samples=128)
    h = regular_homotopy(a, b, frames=12, samples=128, easing=s.easing, names=("start", "end"))
    want = wall_positions(h.points, wall_height_for(h.points, s.height))
    key = wall.data.shape_keys
    assert len(key.key_blocks) == 12 and not key.use_relative
    got = evaluated_positions(wall, range(3, 15))
    assert got.shape == want.shape == (12, 256, 3)
    assert np.abs(got - want).max() <= 1e-5
    scene = bpy.context.scene
    assert (scene.frame_start, scene.frame_end) == (3, 14)
    assert len(wall.data.polygons) == 128 and all(len(p.vertices) == 4 for p in wall.data.polygons)
    rec = json.loads(wall["turnabout_curves"])
    assert rec["turning_number"] == 1 and rec["frames"] == 12
    # the two-sided material of the add-on, so both faces of the wall show
    mat = wall.data.materials[0]
    assert "turnabout_look" in mat and "Side mix" in mat.node_tree.nodes


@pytest.mark.usefixtures("blank")
def test_mark_beads_follow_the_core_marks_with_one_colour_per_sign():
    # a circle into a five-wave curve: inflections appear, so marks of both signs are born
    knots = _bezier_knots()
    t = 2 * np.pi * (np.arange(300) + 1 / 3) / 300
    r = 1 + 0.3 * np.cos(5 * t)
    wavy = np.stack([r * np.cos(t), r * np.sin(t), np.zeros_like(t)], 1)
    a_ob = bezier_object("round", *knots)
    b_ob = poly_object("wavy", wavy)
    s = bpy.context.scene.turnabout_curves
    s.frames, s.frame_start, s.samples, s.show_marks = 10, 1, 128, True
    select(a_ob, b_ob)
    assert bpy.ops.turnabout.curve_homotopy() == {"FINISHED"}
    wall = bpy.context.active_object
    beads = [o for o in bpy.data.objects if o.parent is wall]
    assert len(beads) == 1
    ob = beads[0]
    a = core_bezier(*knots, samples=128)
    b = curve_from_polyline(wavy[:, :2], samples=128)
    h = regular_homotopy(a, b, frames=10, samples=128, easing=s.easing, names=("round", "wavy"))
    height = wall_height_for(h.points, s.height)
    want = mark_beads(marks_per_frame(h.points), radius=s.bead_size * height, z=height)
    assert want.n_tracks > 2 and set(want.signs.tolist()) == {-1, 1}
    got = evaluated_positions(ob, range(1, 11))
    assert got.shape == want.positions.shape
    assert np.abs(got - want.positions).max() <= 1e-5
    index = np.empty(len(ob.data.polygons), np.int32)
    ob.data.polygons.foreach_get("material_index", index)
    assert np.array_equal(index, np.repeat((want.signs < 0).astype(np.int32), 8))
    assert len(ob.data.materials) == 2


@pytest.mark.usefixtures("blank")
def test_beads_can_be_left_out():
    wall, *_ = _morph(frames=4, samples=64, marks=False)
    assert not [o for o in bpy.data.objects if o.parent is wall]


@pytest.mark.usefixtures("blank")
def test_checker_runs_on_the_wall_reports_an_open_band_and_finds_where_it_meets_itself(tmp_path):
    # two limacons with inner loops (turning number 2): a closed curve without self-crossings
    # turns exactly once (Hopf, "Ueber die Drehung der Tangenten und Sehnen ebener Kurven",
    # 1935), so every frame crosses itself and its wall meets itself along a vertical segment
    a = poly_object("loop a", limacon_xyz(b=0.5))
    b = poly_object("loop b", limacon_xyz(b=0.3) * [1.5, 1.0, 1.0])
    s = bpy.context.scene.turnabout_curves
    s.frames, s.frame_start, s.samples, s.show_marks = 6, 1, 96, False
    select(a, b)
    assert bpy.ops.turnabout.curve_homotopy() == {"FINISHED"}
    assert bpy.ops.turnabout.check(report_dir=str(tmp_path)) == {"FINISHED"}
    settings = bpy.context.scene.turnabout
    assert len(settings.results) == 6 and settings.last_verdict
    report = json.loads(next(tmp_path.glob("*_check.json")).read_text())
    topo = report["topology"]
    assert topo["closed"] is False and topo["boundary_edges"] == 2 * 96
    assert topo["euler_characteristic"] == 0  # an annulus (handbook: chi = 2 - 2g - b)
    assert any("boundary edges" in r for r in report["reasons"])
    assert all(f["double_curve_count"] >= 1 for f in report["frames"])


def test_unregister_removes_the_curves_settings_and_classes():
    import turnabout_blender
    from turnabout_blender import headless

    headless.ensure_registered()
    turnabout_blender.unregister()
    try:
        assert not hasattr(bpy.types.Scene, "turnabout_curves")
        assert not hasattr(bpy.types, "TURNABOUT_PT_curves")
        assert not hasattr(bpy.types, "TURNABOUT_OT_curve_homotopy")
    finally:
        turnabout_blender.register()
