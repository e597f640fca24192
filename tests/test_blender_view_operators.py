"""The views in Blender as a user drives them: bad input refused without changes, the
panel's operators, undo, rebuilds, and the ``turnabout scene`` / ``render`` view options.

Face counts are checked against the core (``turnabout.views``); the shared set-up is in
tests/view_support.py.
"""

from __future__ import annotations

import json

import pytest
from blender_support import blank, bpy  # noqa: F401  (fixture)
from view_support import KINDS, STRIPS, baked_eversion, data_counts, evaluated_mesh

pytestmark = pytest.mark.blender


# ----------------------------------------------------------------------------- bad input


def _cube():
    me = bpy.data.meshes.new("Box")
    me.from_pydata([(0, 0, 0), (1, 0, 0), (0, 1, 0)], [], [(0, 1, 2)])
    cube = bpy.data.objects.new("Box", me)
    bpy.context.scene.collection.objects.link(cube)
    return cube


@pytest.mark.parametrize(
    "op, settings, message",
    [
        ("show_parts", {"parts": "guide:8"}, "guide index 8 is out of range"),
        ("show_parts", {"parts": "stripes"}, "unknown word 'stripes'"),
        ("show_parts", {"parts": "caps:east"}, "unknown cap 'east'"),
        ("show_parts", {"parts": "tile:16"}, "0-15"),
        ("add_slice_rig", {"slice_count": 4, "slice_which": 4}, "band 4 is out of range"),
        ("add_slice_rig", {"level_up": (0.0, 0.0, 0.0)}, "non-zero"),
        ("add_level_points", {"level_up": (0.0, 0.0, 0.0)}, "non-zero"),
        ("add_reveal", {"reveal_use_range": False, "reveal_start": 9, "reveal_end": 3}, "9-3"),
        ("add_stills", {"target": "Box"}, "not a Turnabout eversion"),
        ("show_parts", {"target": "Box"}, "not a Turnabout eversion"),
        ("add_reveal", {"target": "Box"}, "not a Turnabout eversion"),
        ("apply_stripes", {"target": "Box"}, "not a Turnabout eversion"),
    ],
)
@pytest.mark.usefixtures("blank")
def test_bad_view_input_is_refused_and_changes_nothing(op, settings, message):
    from turnabout_blender import view_objects as vo
    from turnabout_blender.view_options import parse_parts

    ob = baked_eversion(frames=4)
    vo.make_parts_view(bpy.context.scene, ob, parse_parts("guide:1", STRIPS))
    _cube()
    bpy.context.view_layer.objects.active = ob
    s = bpy.context.scene.turnabout_views
    kwargs = {}
    for key, value in settings.items():
        if key == "target":
            kwargs["target"] = value
        else:
            setattr(s, key, value)
    before = data_counts()
    mod = bpy.data.objects["Eversion view"].modifiers[vo.FILTER_MOD]
    shown = [i.default_value for i in mod.node_group.nodes[vo.N_PARTS].inputs[1:-1]]
    with pytest.raises(RuntimeError) as err:
        getattr(bpy.ops.turnabout, op)(**kwargs)
    assert message in str(err.value)
    assert data_counts() == before
    assert [i.default_value for i in mod.node_group.nodes[vo.N_PARTS].inputs[1:-1]] == shown


@pytest.mark.usefixtures("blank")
def test_panel_operators_make_and_clear_the_views():
    ob = baked_eversion(frames=6)
    bpy.context.view_layer.objects.active = ob
    before = data_counts()
    s = bpy.context.scene.turnabout_views
    s.parts = "guide:0,1 caps"
    assert bpy.ops.turnabout.show_parts() == {"FINISHED"}
    ob.name = "Sphere"  # the view follows its eversion by pointer, not by name
    bpy.context.view_layer.objects.active = bpy.data.objects["Eversion view"]
    assert bpy.ops.turnabout.show_parts(parts="wave") == {"FINISHED"}
    assert len([o for o in bpy.data.objects if "turnabout_view" in o]) == 1
    s.reveal_by = "PART"
    assert bpy.ops.turnabout.add_reveal() == {"FINISHED"}
    s.stripes = True
    assert bpy.ops.turnabout.apply_stripes() == {"FINISHED"}
    assert bpy.ops.turnabout.add_stills() == {"FINISHED"}
    assert ob.hide_render
    assert bpy.ops.turnabout.clear_views() == {"FINISHED"}
    s.stripes = False
    assert bpy.ops.turnabout.apply_stripes() == {"FINISHED"}
    after = data_counts()
    assert after == before
    assert not ob.hide_render and not ob.hide_viewport
    assert not [a.name for a in ob.data.attributes if a.name.startswith("turnabout_")
                and a.name != "turnabout_guide"]  # fmt: skip


@pytest.mark.usefixtures("blank")
def test_a_rebuilt_eversion_keeps_its_view_on_the_new_bake_without_orphans():
    from blender_support import orphans, set_small_build

    from turnabout.views.parts import surface_parts

    s = bpy.context.scene.turnabout
    set_small_build(s, frames=6, n_lon=64, n_lat=16)
    s.mesh_spacing = "EVEN"
    bpy.ops.turnabout.add_eversion()
    ob = bpy.context.active_object
    bpy.context.scene.turnabout_views.parts = "wave:1 caps:north"
    assert bpy.ops.turnabout.show_parts() == {"FINISHED"}
    s.strips, s.mesh_lon = 10, 80  # ten strips need a multiple of ten longitudes
    bpy.context.view_layer.objects.active = ob
    assert bpy.ops.turnabout.rebuild() == {"FINISHED"}
    bpy.context.scene.turnabout_views.parts = "wave:9 caps:north"
    assert bpy.ops.turnabout.show_parts() == {"FINISHED"}
    view = bpy.data.objects["Eversion view"]
    assert view.data is ob.data and orphans() == []
    from turnabout_blender import view_objects as vo

    info = vo.eversion_info(ob)
    mask = surface_parts(vo.sphere_of(ob, info), 10).select(waves=(9,), caps=("north",))
    assert len(evaluated_mesh(view, 4)[1]) == int(mask.sum())


@pytest.mark.usefixtures("blank")
def test_undo_takes_a_parts_view_back():
    ob = baked_eversion(frames=4)
    bpy.context.view_layer.objects.active = ob
    bpy.ops.ed.undo_push(message="baked")
    before = data_counts()
    assert bpy.ops.turnabout.show_parts(parts="guide:2") == {"FINISHED"}
    bpy.ops.ed.undo_push(message="parts shown")
    assert data_counts() != before
    bpy.ops.ed.undo()
    assert data_counts() == before
    assert not bpy.data.objects["Eversion"].hide_render


@pytest.mark.usefixtures("blank")
def test_slice_and_level_point_buttons_call_the_rigs_and_clear_views_removes_them(tmp_path):
    ob = baked_eversion(frames=6, size=(64, 48), samples=2)
    bpy.context.view_layer.objects.active = ob
    before = data_counts()
    s = bpy.context.scene.turnabout_views
    s.slice_count, s.slice_which = 5, 2
    s.slice_image = str(tmp_path / "band.png")
    assert bpy.ops.turnabout.show_parts(parts="guide") == {"FINISHED"}  # hides the eversion
    assert bpy.ops.turnabout.add_slice_rig() == {"FINISHED"}
    assert bpy.context.scene.camera.name == "Eversion band top"
    assert bpy.ops.turnabout.render_slices() == {"FINISHED"}
    from turnabout_blender import headless

    img = headless.read_png(str(tmp_path / "band.png"))
    assert img.shape[1] == 2 * 64 and (img[..., 3] > 0.5).sum() > 20
    s.level_text = False
    assert bpy.ops.turnabout.add_level_points() == {"FINISHED"}
    assert "turnabout_signed_count" in ob
    assert "Eversion count text" not in bpy.data.objects
    s.level_text = True
    assert bpy.ops.turnabout.add_level_points() == {"FINISHED"}
    assert "Eversion count text" in bpy.data.objects
    assert ob.hide_viewport  # still hidden behind its view after the rigs read it
    assert bpy.ops.turnabout.clear_views() == {"FINISHED"}
    after = data_counts()
    for kind in KINDS:
        assert after[kind] == before[kind], kind


class _Layout:
    """Stands in for a panel's layout (there is no window headless): records what a draw
    asks for, so the test can check every named property and operator exists."""

    def __init__(self, log):
        self.log = log
        self.enabled = True

    def __getattr__(self, name):
        if name in ("row", "column", "box", "split", "grid_flow"):
            return lambda *a, **k: _Layout(self.log)
        return lambda *a, **k: None

    def prop(self, data, name, **kwargs):
        self.log.append(("prop", data, name))

    def operator(self, idname, **kwargs):
        self.log.append(("operator", None, idname))


@pytest.mark.usefixtures("blank")
def test_the_views_panel_names_only_settings_and_operators_that_exist():
    from types import SimpleNamespace

    from turnabout_blender.views_panel import TURNABOUT_PT_views

    ob = baked_eversion(frames=4)
    log = []
    panel = SimpleNamespace(layout=_Layout(log))
    TURNABOUT_PT_views.draw(panel, SimpleNamespace(scene=bpy.context.scene, active_object=ob))
    props = [name for kind, _, name in log if kind == "prop"]
    ops = [name for kind, _, name in log if kind == "operator"]
    assert len(props) >= 15 and len(ops) >= 9
    s = bpy.context.scene.turnabout_views
    for name in props:
        assert name in s.bl_rna.properties, name
    for idname in ops:
        group, op = idname.split(".")
        assert hasattr(getattr(bpy.ops, group), op), idname
        assert getattr(getattr(bpy.ops, group), op).poll() in (True, False)


# ----------------------------------------------------------------------------- command line


@pytest.mark.parametrize(
    "extra, message",
    [
        (["--parts", "guide:8"], "--parts: guide index 8 is out of range"),
        (["--parts", "rim"], "--parts: unknown word 'rim'"),
        (["--reveal", "spiral"], "--reveal: must be band or part"),
        (["--reveal", "band", "--reveal-frames", "5-2"], "--reveal-frames"),
        (["--stripes", "0"], "--stripes: the spacing must be a number > 0"),
        (["--slices", "4", "--slice", "4"], "--slice: band 4 is out of range"),
        (["--slices", "4", "--slice-width", "60"], "--slice-width"),
        (["--up", "0,0,0"], "--up: must be a non-zero"),
        (["--up", "1,2"], "--up: must be three numbers"),
    ],
)
@pytest.mark.usefixtures("blank")
def test_bad_view_options_exit_2_naming_the_option_before_any_work(
    tmp_path, capsys, extra, message
):
    from turnabout.cli import main

    out = tmp_path / "x.blend"
    code = main(
        ["scene", str(out), "--frames", "4", "--lon", "64", "--lat", "16", "--quiet", *extra]
    )
    assert code == 2
    assert message in capsys.readouterr().err
    assert not out.exists()
    assert len(bpy.data.objects) == 0  # refused before the scene was built


@pytest.mark.usefixtures("blank")
def test_scene_command_writes_every_view(tmp_path, capsys):
    from turnabout.cli import main
    from turnabout_blender import headless
    from turnabout_blender import view_objects as vo
    from turnabout_blender import view_stripes as vp

    out = str(tmp_path / "shot.blend")
    argv = [
        "scene",
        out,
        "--frames",
        "6",
        "--lon",
        "64",
        "--lat",
        "17",
        "--quiet",
        "--size",
        "80x60",
    ]
    argv += ["--parts", "guide:0,1", "caps", "--reveal", "band:4", "--stripes", "0.25"]
    assert main(argv) == 0
    headless.open_blend(out)
    view = bpy.data.objects["Eversion view"]
    assert json.loads(view[vo.VIEW_TAG])["parts"] == "guide:0,1 caps"
    assert json.loads(view[vo.VIEW_TAG])["reveal"] == ["band", 4, 1, 6]
    # the command's mesh has the default spacing (samples where the surface bends), which
    # the add-on reads back from the UV map: the core's parts on the exact mesh must match
    from turnabout.baking.plan import mesh_from_settings
    from turnabout.eversion import Controls
    from turnabout.views.parts import surface_parts

    exact = mesh_from_settings(Controls(), 64, 17, "bend")
    mask = surface_parts(exact, STRIPS).select(guides=(0, 1), caps=("south", "north"))
    _, tri = evaluated_mesh(view, 6)
    assert len(tri) == int(mask.sum())
    nodes = bpy.data.objects["Eversion"].data.materials[0].node_tree.nodes
    assert nodes[vp.N_STRIPE_SCALE].inputs[1].default_value == pytest.approx(0.25)


@pytest.mark.usefixtures("blank")
def test_render_side_by_side_shows_the_band_from_above_beside_the_side_view(tmp_path, capsys):
    from turnabout.cli import main
    from turnabout_blender import headless

    band = str(tmp_path / "band.blend")
    base = ["--frames", "6", "--lon", "64", "--lat", "16", "--spacing", "even", "--quiet"]
    assert main(["scene", band, *base, "--slices", "6", "--slice", "2"]) == 0
    out = tmp_path / "pairs"
    argv = ["render", band, str(out), "--frames", "1,4", "--size", "64x48", "--samples", "4"]
    assert main([*argv, "--side-by-side", "--quiet"]) == 0
    for f in (1, 4):
        img = headless.read_png(str(out / f"frame_{f:04d}.png"))
        assert img.shape[:2] == (48, 128)  # twice the width: top view, then side view
        for half in (img[:, :64], img[:, 64:]):
            # the surface shows in both halves against the dark world
            assert (half[..., :3].max(axis=-1) > 0.2).mean() > 0.03
    # a file without a band camera is refused before anything is rendered
    plain = str(tmp_path / "plain.blend")
    assert main(["scene", plain, *base]) == 0
    capsys.readouterr()
    none = tmp_path / "none"
    assert main(["render", plain, str(none), "--frames", "1", "--side-by-side", "--quiet"]) == 2
    assert "--side-by-side" in capsys.readouterr().err
    assert not none.exists() or not any(none.iterdir())
