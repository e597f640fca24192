"""Every sidebar panel's draw code, run headless against a checking layout recorder.

Blender draws no panels in background mode, so each panel's real ``draw`` runs here with
a stand-in layout (tests/layout_recorder.py) that checks every call against Blender's own
description of ``UILayout``: a property name that does not exist, an unregistered
operator, a wrong icon or keyword would raise in the interface and blank the panel.
Each panel is drawn in the states a user meets: nothing selected, a plain mesh, an
eversion (stored as a point cache), after a check, with a view object active, and with a
closed curve active.
"""

from __future__ import annotations

import types

import pytest
from blender_support import bpy, fresh_file, set_small_build
from layout_recorder import LayoutCallError, LayoutRecorder

pytestmark = pytest.mark.blender


def _addon_classes():
    import turnabout_blender

    return turnabout_blender._classes()


def _panels():
    return [c for c in _addon_classes() if issubclass(c, bpy.types.Panel)]


def _draw(cls, context):
    """Run ``cls.draw`` (after ``cls.poll``, when it has one) on a recorder; None if polled out."""
    poll = getattr(cls, "poll", None)
    if poll is not None and not poll(context):
        return None
    layout = LayoutRecorder()
    cls.draw(types.SimpleNamespace(layout=layout, bl_label=cls.bl_label), context)
    return layout


def _draw_everything(context) -> dict:
    """Draw every panel, every list row and the Add-menu entry; returns name -> recorder
    (or the LayoutCallError that panel's draw raised)."""
    from turnabout_blender import ui

    out = {}
    for cls in _panels():
        try:
            out[cls.__name__] = _draw(cls, context)
        except LayoutCallError as exc:
            out[cls.__name__] = exc
    lists = [c for c in _addon_classes() if issubclass(c, bpy.types.UIList)]
    s = context.scene.turnabout
    for cls in lists:
        layout = LayoutRecorder()
        for i, row in enumerate(s.results):
            stand_in = types.SimpleNamespace(layout=layout)
            cls.draw_item(stand_in, context, layout, s, row, 0, s, "results_index", i)
        out[cls.__name__] = layout
    menu = LayoutRecorder()
    ui.draw_add_menu(types.SimpleNamespace(layout=menu), context)
    out["add menu"] = menu
    return out


def _polls(context) -> dict:
    """idname -> whether the operator can run here, for the add-on operators with a poll."""
    ops = [c for c in _addon_classes() if issubclass(c, bpy.types.Operator)]
    return {c.bl_idname: bool(c.poll(context)) for c in ops if "poll" in c.__dict__}


# ----------------------------------------------------------------------------- states


def _bake(point_cache=False):
    s = bpy.context.scene.turnabout
    set_small_build(s, frames=6)
    assert bpy.ops.turnabout.add_eversion() == {"FINISHED"}
    if point_cache:
        s.bake_mode = "POINT_CACHE"  # draws the cache folder (still '//...')
    return bpy.context.active_object


def _state_nothing():
    pass


def _state_plain_mesh():
    bpy.ops.mesh.primitive_uv_sphere_add(segments=16, ring_count=8)


def _state_eversion():
    _bake(point_cache=True)
    bpy.context.scene.turnabout.colour_strips = True
    bpy.context.scene.turnabout_views.stripes = True


def _state_checked():
    _bake()
    bpy.context.scene.turnabout.check_use_scene_range = False
    bpy.context.scene.turnabout.check_start, bpy.context.scene.turnabout.check_end = 1, 6
    assert bpy.ops.turnabout.check(write_reports=False) == {"FINISHED"}


def _state_view_active():
    ob = _bake()
    assert bpy.ops.turnabout.show_parts(parts="caps") == {"FINISHED"}
    view = next(o for o in bpy.data.objects if "turnabout_view" in o and o is not ob)
    bpy.context.view_layer.objects.active = view


def _state_curve_active():
    bpy.ops.curve.primitive_bezier_circle_add(radius=1.0)


STATES = {
    "nothing selected": _state_nothing,
    "a plain mesh": _state_plain_mesh,
    "an eversion stored as a point cache": _state_eversion,
    "after a check": _state_checked,
    "a view object active": _state_view_active,
    "a closed curve active": _state_curve_active,
}


@pytest.fixture(scope="module")
def drawn():
    """Every state's drawings, made once for the module: state -> name -> recorder."""
    out = {}
    for name, make in STATES.items():
        fresh_file()
        make()
        out[name] = _draw_everything(bpy.context)
        out[name]["polls"] = _polls(bpy.context)
    fresh_file()
    return out


# ----------------------------------------------------------------------------- tests


@pytest.mark.parametrize("state", list(STATES))
def test_every_panel_draws_only_existing_properties_and_registered_operators(drawn, state):
    panels = {c.__name__ for c in _panels()}
    assert panels >= {"TURNABOUT_PT_build", "TURNABOUT_PT_check", "TURNABOUT_PT_views"}
    refused = {n: str(v) for n, v in drawn[state].items() if isinstance(v, LayoutCallError)}
    assert refused == {}
    for name in panels:
        layout = drawn[state][name]
        assert layout is not None and layout.calls, f"{name} drew nothing in {state!r}"


@pytest.mark.parametrize("state", list(STATES))
def test_a_button_greyed_out_by_a_panel_is_one_its_operator_refuses_there(drawn, state):
    polls = drawn[state]["polls"]
    assert {"turnabout.rebuild", "turnabout.load_settings"} <= set(polls)
    for name, layout in drawn[state].items():
        if not isinstance(layout, LayoutRecorder):
            continue
        for call, given, where in layout.calls:
            op = given.get("operator") if call == "operator" else None
            if op in polls and not where.shown_enabled():
                assert not polls[op], f"{name} greys out {op} in {state!r}, which could run"


def test_rebuild_and_load_buttons_are_live_exactly_when_an_eversion_is_active(drawn):
    for state, layouts in drawn.items():
        live = {
            given["operator"]: where.shown_enabled()
            for call, given, where in layouts["TURNABOUT_PT_build"].calls
            if call == "operator"
        }
        eversion = state in ("an eversion stored as a point cache", "after a check")
        assert live["turnabout.rebuild"] == live["turnabout.load_settings"] == eversion, state
        assert live["turnabout.add_eversion"], state
        assert layouts["polls"]["turnabout.rebuild"] == eversion, state


def test_the_tuned_values_button_sits_beside_the_strips_and_is_live_in_every_state(drawn):
    # the strip count it reads is never greyed out, so neither is the button
    for state, layouts in drawn.items():
        calls = layouts["TURNABOUT_PT_build"].calls
        drawn_on = {}
        for call, given, where in calls:
            name = given.get("property") if call == "prop" else given.get("operator")
            drawn_on.setdefault(name, []).append(where)
        strips, button = drawn_on["strips"], drawn_on["turnabout.use_tuned_controls"]
        assert len(strips) == len(button) == 1, state
        assert button[0] is strips[0], f"not on the strip count's row in {state!r}"
        assert button[0].shown_enabled() and strips[0].shown_enabled(), state


def test_every_addon_operator_is_reachable_from_a_panel_or_the_add_menu(drawn):
    shown = set()
    for layouts in drawn.values():
        for layout in layouts.values():
            if isinstance(layout, LayoutRecorder):
                shown.update(layout.operators_drawn())
    registered = {c.bl_idname for c in _addon_classes() if issubclass(c, bpy.types.Operator)}
    assert registered - shown == set()


def test_the_check_panel_shows_the_verdict_and_the_list_only_after_a_check(drawn):
    before = drawn["an eversion stored as a point cache"]["TURNABOUT_PT_check"]
    after = drawn["after a check"]["TURNABOUT_PT_check"]
    assert not any(t.startswith("Verdict:") for t in before.labels())
    assert "template_list" not in [c[0] for c in before.calls]
    verdicts = [t for t in after.labels() if t.startswith("Verdict:")]
    assert len(verdicts) == 1 and verdicts[0] != "Verdict: "
    assert "template_list" in [c[0] for c in after.calls]
    # one list row per checked frame (frames 1-6), each showing its frame number first
    rows = drawn["after a check"]["TURNABOUT_UL_frames"].labels()
    assert rows[0::3] == [str(f) for f in range(1, 7)]


def test_the_build_panel_shows_the_cache_folder_only_for_point_caches(drawn):
    cached = drawn["an eversion stored as a point cache"]["TURNABOUT_PT_build"]
    assert "cache_dir" in cached.props_drawn()
    assert "cache_dir" not in drawn["nothing selected"]["TURNABOUT_PT_build"].props_drawn()


def test_the_views_panel_asks_for_an_eversion_until_one_or_its_view_is_active(drawn):
    ask = "Select a Turnabout eversion"
    assert ask in drawn["nothing selected"]["TURNABOUT_PT_views"].labels()
    assert ask in drawn["a plain mesh"]["TURNABOUT_PT_views"].labels()
    assert ask not in drawn["an eversion stored as a point cache"]["TURNABOUT_PT_views"].labels()
    assert ask not in drawn["a view object active"]["TURNABOUT_PT_views"].labels()


def test_the_curves_panel_shows_a_circles_turning_number(drawn):
    # a simple closed curve turns its tangent once: turning number +-1 (H. Hopf, "Ueber die
    # Drehung der Tangenten und Sehnen ebener Kurven", 1935)
    labels = drawn["a closed curve active"]["TURNABOUT_PT_curves"].labels()
    numbers = [t for t in labels if "turning number" in t]
    assert len(numbers) == 1 and numbers[0].split("turning number ")[1] in ("1", "-1")
    nothing = drawn["nothing selected"]["TURNABOUT_PT_curves"]
    assert "Select a closed curve object" in nothing.labels()


# ----------------------------------------------------------------------------- the recorder


def _typo_property(layout, s):
    layout.prop(s, "strip")


def _unregistered_operator(layout, s):
    layout.operator("turnabout.evert_now")


def _operator_property_typo(layout, s):
    layout.operator("turnabout.check").write_report = False


def _bad_icon(layout, s):
    layout.row().label(text="x", icon="NOT_AN_ICON")


def _bad_keyword(layout, s):
    layout.column(allign=True)


def _bad_attribute(layout, s):
    layout.row().enable = False


def _unregistered_list(layout, s):
    layout.template_list("TURNABOUT_UL_nothing", "", s, "results", s, "results_index")


def _layout_function_typo(layout, s):
    layout.colum()


@pytest.mark.parametrize(
    "draw",
    [
        _typo_property,
        _unregistered_operator,
        _operator_property_typo,
        _bad_icon,
        _bad_keyword,
        _bad_attribute,
        _unregistered_list,
        _layout_function_typo,
    ],
)
def test_the_recorder_refuses_what_blender_would_refuse(draw):
    fresh_file()
    with pytest.raises(LayoutCallError):
        draw(LayoutRecorder(), bpy.context.scene.turnabout)
