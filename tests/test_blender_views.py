"""Views of a baked eversion in Blender: parts sharing the bake, stills, reveal, stripes.

The reference for every face count is the core (``turnabout.views``), computed here on the
same sphere mesh; positions come from Blender's depsgraph; renders are checked on pixels
against the analytic image of the round sphere (the motion's first frame).
"""

from __future__ import annotations

import json
import os

import numpy as np
import pytest
from blender_support import REPO, blank, bpy, counts, run_python  # noqa: F401  (fixture)

pytestmark = pytest.mark.blender

STRIPS = 8
MESH = (64, 17)  # an odd ring count: the equator is not a ring, so quads split there
KINDS = COUNTED_VIEWS = ("objects", "meshes", "materials", "node_groups", "actions", "collections")


def _sphere():
    from turnabout.mesh import uniform_sphere_mesh

    return uniform_sphere_mesh(*MESH)


def _build(frames=8, mode="SHAPE_KEYS", size=(160, 120), cache_dir=None, samples=8):
    from turnabout.eversion import Controls

    from turnabout_blender import headless

    return headless.build_scene(
        Controls(strips=STRIPS),
        frames=frames,
        mesh=_sphere(),
        mode=mode,
        cache_dir=cache_dir,
        size=size,
        samples=samples,
    )


def _data_counts() -> dict:
    out = counts()
    for kind in KINDS:
        out[kind] = len(getattr(bpy.data, kind))
    return out


def _evaluated(ob, frame):
    """(positions (v, 3) float64, triangles (m, 3) int32) of ``ob`` evaluated at ``frame``."""
    scene = bpy.context.scene
    scene.frame_set(frame)
    me = ob.evaluated_get(bpy.context.evaluated_depsgraph_get()).data
    me.calc_loop_triangles()
    co = np.empty(len(me.vertices) * 3, np.float32)
    me.vertices.foreach_get("co", co)
    tri = np.empty(len(me.loop_triangles) * 3, np.int32)
    me.loop_triangles.foreach_get("vertices", tri)
    return co.reshape(-1, 3).astype(np.float64), tri.reshape(-1, 3)


def _sorted_rows(p):
    return p[np.lexsort(p.T[::-1])]


def _core_parts():
    from turnabout.views.parts import surface_parts

    return surface_parts(_sphere(), STRIPS)


CHOICES = [
    ("guide:0,1 caps", lambda p: p.select(guides=(0, 1), caps=("south", "north"))),
    ("wave:3 caps:north", lambda p: p.select(waves=(3,), caps=("north",))),
    ("guide", lambda p: p.guide()),
    ("tile", lambda p: p.fundamental_piece()),
    ("all", lambda p: np.ones(p.label.shape, bool)),
]


@pytest.mark.parametrize("mode", ["SHAPE_KEYS", "POINT_CACHE"])
@pytest.mark.usefixtures("blank")
def test_parts_view_shows_exactly_the_core_faces_and_shares_the_bake(tmp_path, mode):
    from turnabout_blender import view_objects as vo
    from turnabout_blender.view_options import parse_parts

    ob = _build(mode=mode, cache_dir=str(tmp_path))
    sphere, parts = _sphere(), _core_parts()
    tris = sphere.triangles()
    scene = bpy.context.scene
    n_keys = len(bpy.data.shape_keys)
    for text, core_mask in CHOICES:
        mask = core_mask(parts)
        view = vo.make_parts_view(scene, ob, parse_parts(text, STRIPS))
        assert view.data is ob.data  # the same mesh datablock, so the same shape keys
        assert view.material_slots[0].material is ob.material_slots[0].material  # both sides
        for frame in (2, 6):
            p_view, t_view = _evaluated(view, frame)
            ob.hide_viewport = False  # read the whole surface at the same frame
            p_full, _ = _evaluated(ob, frame)
            ob.hide_viewport = True
            assert len(t_view) == int(mask.sum()), (text, frame)
            # the view's vertices are exactly the vertices of the core's chosen triangles,
            # where the whole surface has them at that frame (Blender may cut a bent quad
            # along its other diagonal for display, so triangles are compared by count)
            want = p_full[np.unique(tris[mask])]
            assert p_view.shape == want.shape, (text, frame)
            assert np.abs(_sorted_rows(p_view) - _sorted_rows(want)).max() < 1e-6, (text, frame)
    assert len(bpy.data.shape_keys) == n_keys  # no second bake
    views = [o for o in bpy.data.objects if o.get(vo.VIEW_TAG)]
    assert len(views) == 1  # switching reuses the one view object


@pytest.mark.usefixtures("blank")
def test_the_fundamental_piece_is_one_2n_th_of_the_faces():
    """The symmetry group of an n-strip eversion has order 2n (the n turns about the axis
    and n half-turns), so a fundamental piece holds M / (2n) of the M triangles."""
    from turnabout_blender import view_objects as vo
    from turnabout_blender.view_options import parse_parts

    ob = _build(frames=4)
    view = vo.make_parts_view(bpy.context.scene, ob, parse_parts("tile", STRIPS))
    total = 2 * MESH[0] * MESH[1]
    for frame in (1, 3):
        _, tri = _evaluated(view, frame)
        assert len(tri) * 2 * STRIPS == total
    # and the 2n tiles together are the whole surface, each once
    seen = 0
    for g in range(2 * STRIPS):
        view = vo.make_parts_view(bpy.context.scene, ob, parse_parts(f"tile:{g}", STRIPS))
        seen += len(_evaluated(view, 2)[1])
    assert seen == total


@pytest.mark.usefixtures("blank")
def test_reveal_plays_the_core_order_with_a_keyframed_threshold():
    from turnabout.views.reveal import reveal_order

    from turnabout_blender import view_objects as vo

    ob = _build(frames=9)
    scene = bpy.context.scene
    view = vo.add_reveal(scene, ob, "band", 4, (1, 9))
    order = reveal_order(_sphere(), STRIPS, by="band", count=4)
    top = order.max() + 1e-3
    shown = []
    for frame in (1, 3, 5, 7, 9):
        threshold = top * (frame - 1) / 8  # the LINEAR keyframes 0 at frame 1, top at 9
        _, tri = _evaluated(view, frame)
        assert len(tri) == int((order < threshold).sum()), frame
        shown.append(len(tri))
    assert shown[0] == 0 and shown[-1] == len(order)
    assert shown == sorted(shown) and len(set(shown)) == 5


@pytest.mark.usefixtures("blank")
def test_stills_are_static_copies_of_the_bake_at_the_key_moments():
    from turnabout.eversion import Controls
    from turnabout.views.reveal import key_moments

    from turnabout_blender import view_objects as vo
    from turnabout_blender import view_stills as vs

    ob = _build(frames=21)
    before_keys = len(bpy.data.shape_keys)
    stills = vs.add_stills(bpy.context.scene, ob)
    moments = key_moments(Controls(strips=STRIPS))
    assert [json.loads(s[vo.VIEW_TAG])["moment"] for s in stills] == [m for m, _ in moments]
    assert len(bpy.data.shape_keys) == before_keys  # stills carry no animation
    xs = [s.location.x for s in stills]
    assert xs == sorted(xs) and len(set(xs)) == len(xs)
    ob.hide_viewport = False
    for still, (_, t) in zip(stills, moments, strict=True):
        frame = 1 + round(t * 20)
        p_full, _ = _evaluated(ob, frame)
        co = np.empty(len(still.data.vertices) * 3, np.float32)
        still.data.vertices.foreach_get("co", co)
        assert still.data.shape_keys is None
        assert np.abs(co.reshape(-1, 3) - p_full).max() < 1e-5, still.name


# ----------------------------------------------------------------------------- renders


def _render(path, frame):
    from turnabout_blender import headless

    scene = bpy.context.scene
    scene.frame_set(frame)
    scene.render.film_transparent = True  # the surface's pixels are the ones with alpha
    scene.render.filepath = str(path)
    bpy.ops.render.render(write_still=True)
    return headless.read_png(str(path))


def _keep_image(src, name):
    """Copy a rendered image to the folder given in TURNABOUT_VIEW_IMAGES (docs refresh)."""
    folder = os.environ.get("TURNABOUT_VIEW_IMAGES")
    if folder:
        import shutil

        shutil.copyfile(src, os.path.join(folder, name))


@pytest.mark.usefixtures("blank")
def test_render_of_a_strip_and_caps_shows_background_and_the_inner_side_through_gaps(tmp_path):
    from turnabout_blender import view_objects as vo
    from turnabout_blender.view_options import parse_parts

    ob = _build()
    full = _render(tmp_path / "full.png", 1)
    vo.make_parts_view(bpy.context.scene, ob, parse_parts("guide:0 caps", STRIPS))
    part = _render(tmp_path / "part.png", 1)
    _keep_image(tmp_path / "part.png", "views_parts.png")
    on_full, on_part = full[..., 3] > 0.5, part[..., 3] > 0.5
    assert on_full.sum() > 0.15 * on_full.size
    assert on_part.sum() < 0.6 * on_full.sum()  # one strip and the caps of a round sphere
    assert (on_full & ~on_part).sum() > 0.3 * on_full.sum()  # background where strips were
    r, b = part[..., 0], part[..., 2]
    teal = on_part & (b > r + 0.08)
    teal_full = on_full & (full[..., 2] > full[..., 0] + 0.08)
    # at the first frame the outside faces out everywhere: the inner colour can only show
    # where the far half's inside is seen through the gaps
    assert teal_full.sum() == 0 and teal.sum() > 20


@pytest.mark.usefixtures("blank")
def test_render_of_the_stills_shows_one_blob_per_key_moment(tmp_path):
    from turnabout.eversion import Controls
    from turnabout.views.reveal import key_moments

    from turnabout_blender import view_stills as vs
    from turnabout_blender.view_wiring import stage_for_row

    ob = _build(frames=24, size=(480, 72))
    stills = vs.add_stills(bpy.context.scene, ob, gap=0.6)
    stage_for_row(bpy.context.scene, stills, 480 / 72)
    img = _render(tmp_path / "stills.png", 1)
    _keep_image(tmp_path / "stills.png", "views_stills.png")
    columns = (img[..., 3] > 0.5).any(axis=0)
    starts = np.flatnonzero(columns[1:] & ~columns[:-1]).size + int(columns[0])
    assert starts == len(key_moments(Controls(strips=STRIPS)))


def _ray_heights(scene, radius, width, height):
    """World z of the first hit of each pixel's ray with the sphere of ``radius`` about the
    origin (NaN for a miss), (H, W), from the camera's pinhole model: a 36 mm sensor along
    the longer side (Blender's automatic fit) and the lens in mm."""
    cam = scene.camera
    m = np.array(cam.matrix_world, np.float64)
    half = 18.0 / cam.data.lens  # tan of the half field of view along the longer side
    scale = half / (max(width, height) / 2)
    j, i = np.meshgrid(np.arange(width) + 0.5, np.arange(height) + 0.5)
    d = np.stack([(j - width / 2) * scale, (height / 2 - i) * scale, -np.ones_like(i)], -1)
    d = d @ m[:3, :3].T
    d /= np.linalg.norm(d, axis=-1, keepdims=True)
    o = m[:3, 3]
    bq = (d @ o)[..., None]
    disc = bq**2 - (o @ o - radius**2)
    t = -bq - np.sqrt(np.where(disc > 0, disc, np.nan))
    return (o + t * d)[..., 2]


@pytest.mark.usefixtures("blank")
def test_height_stripes_follow_world_height_on_the_outer_side(tmp_path):
    from turnabout_blender import view_stripes as vp
    from turnabout_blender.view_options import STRIPE_A, STRIPE_B

    spacing = 0.5
    ob = _build(size=(120, 160), samples=16)
    vp.set_stripes(vp.eversion_material(ob), True, spacing)
    img = _render(tmp_path / "stripes.png", 1)
    _keep_image(tmp_path / "stripes.png", "views_stripes.png")
    co = np.empty(len(ob.data.vertices) * 3, np.float32)
    ob.data.vertices.foreach_get("co", co)  # the basis: the round sphere of the first frame
    radius = float(np.linalg.norm(co.reshape(-1, 3), axis=1).mean())
    z = _ray_heights(bpy.context.scene, radius, 120, 160)
    want_b = np.mod(z / spacing, 1.0) > 0.5
    # band A is sand (more green than blue), band B plum (more blue than green); white
    # light and highlights scale or add to all channels alike and keep that sign
    assert STRIPE_A[1] > STRIPE_A[2] + 0.1 and STRIPE_B[2] > STRIPE_B[1] + 0.1
    seen = img[..., 3] > 0.5
    got_b = img[..., 2] > img[..., 1]
    # away from the silhouette and the band edges (a pixel's footprint), the colours match
    frac = np.mod(z / spacing, 1.0)
    clear = seen & np.isfinite(z) & (np.abs(frac - 0.5) > 0.08)
    clear &= np.minimum(frac, 1 - frac) > 0.08
    clear &= img[..., 3] > 0.99
    assert clear.sum() > 1000
    assert (got_b[clear] == want_b[clear]).mean() > 0.97
    # colour changes down the middle column: as many as band edges the column crosses
    col = 60
    rows = np.flatnonzero(seen[:, col] & np.isfinite(z[:, col]))
    changes = int(np.sum(got_b[rows[1:], col] != got_b[rows[:-1], col]))
    edges = int(np.sum(np.floor(2 * z[rows[1:], col] / spacing)
                       != np.floor(2 * z[rows[:-1], col] / spacing)))  # fmt: skip
    assert edges >= 5 and abs(changes - edges) <= 1
    # at the last frame the inner side faces out: it keeps its teal, no stripe shows
    last = _render(tmp_path / "last.png", 8)
    inside = last[..., 3] > 0.99
    assert inside.sum() > 500
    assert ((last[..., 2] > last[..., 0] + 0.08) & inside).sum() >= 0.97 * inside.sum()
    # switching the stripes off gives the plain outer colour back
    vp.set_stripes(vp.eversion_material(ob), False)
    plain = _render(tmp_path / "plain.png", 1)
    inside = plain[..., 3] > 0.99
    assert (plain[..., 2] < plain[..., 1])[inside].all()  # apricot: no plum band left


# ----------------------------------------------------------------------------- saved files

REOPEN = """
import sys, json, numpy as np, bpy, addon_utils
bpy.ops.wm.open_mainfile(filepath=sys.argv[1])
enabled = [m.__name__ for m in addon_utils.modules() if addon_utils.check(m.__name__)[1]]
assert not any("turnabout" in name for name in enabled)
assert "turnabout_blender" not in sys.modules
scene = bpy.context.scene
out = {}
for ob in bpy.data.objects:
    if ob.type != "MESH" or "turnabout_view" not in ob:
        continue
    rows = []
    for f in (2, 7):
        scene.frame_set(f)
        me = ob.evaluated_get(bpy.context.evaluated_depsgraph_get()).data
        me.calc_loop_triangles()
        rows.append(len(me.loop_triangles))
    out[json.loads(ob["turnabout_view"])["kind"] + ":" + ob.name] = rows
scene.render.resolution_x, scene.render.resolution_y = 48, 36
scene.cycles.samples = 4
scene.frame_set(7)
scene.render.filepath = sys.argv[2]
bpy.ops.render.render(write_still=True)
img = bpy.data.images.load(sys.argv[2])
px = np.empty(img.size[0] * img.size[1] * 4, np.float32)
img.pixels.foreach_get(px)
out["alpha"] = int((px[3::4] > 0.5).sum())
print("RESULT" + json.dumps(out))
"""


@pytest.mark.usefixtures("blank")
def test_saved_file_plays_the_views_without_the_addon(tmp_path):
    from turnabout.views.reveal import reveal_order

    from turnabout_blender import headless
    from turnabout_blender import view_objects as vo
    from turnabout_blender import view_stripes as vp
    from turnabout_blender.view_options import parse_parts

    ob = _build(frames=8)
    scene = bpy.context.scene
    vo.make_parts_view(scene, ob, parse_parts("wave:2,5 caps:south", STRIPS))
    vo.add_reveal(scene, ob, "part", None, (1, 8))
    vp.set_stripes(vp.eversion_material(ob), True, 0.3)
    blend = str(tmp_path / "views.blend")
    headless.save_blend(blend)
    proc = run_python(REOPEN, blend, str(tmp_path / "r.png"), user_dir=tmp_path / "user")
    result = json.loads(proc.stdout.split("RESULT")[1].splitlines()[0])
    mask = _core_parts().select(waves=(2, 5), caps=("south",))
    order = reveal_order(_sphere(), STRIPS, by="part")
    top = order.max() + 1e-3
    want = [int((mask & (order < top * (f - 1) / 7)).sum()) for f in (2, 7)]
    assert result["parts:Eversion view"] == want
    assert want[0] < want[1]
    assert result["alpha"] > 20  # the render is not empty


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

    ob = _build(frames=4)
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
    before = _data_counts()
    mod = bpy.data.objects["Eversion view"].modifiers[vo.FILTER_MOD]
    shown = [i.default_value for i in mod.node_group.nodes[vo.N_PARTS].inputs[1:-1]]
    with pytest.raises(RuntimeError) as err:
        getattr(bpy.ops.turnabout, op)(**kwargs)
    assert message in str(err.value)
    assert _data_counts() == before
    assert [i.default_value for i in mod.node_group.nodes[vo.N_PARTS].inputs[1:-1]] == shown


@pytest.mark.usefixtures("blank")
def test_panel_operators_make_and_clear_the_views():
    ob = _build(frames=6)
    bpy.context.view_layer.objects.active = ob
    before = _data_counts()
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
    after = _data_counts()
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
    assert len(_evaluated(view, 4)[1]) == int(mask.sum())


@pytest.mark.usefixtures("blank")
def test_undo_takes_a_parts_view_back():
    ob = _build(frames=4)
    bpy.context.view_layer.objects.active = ob
    bpy.ops.ed.undo_push(message="baked")
    before = _data_counts()
    assert bpy.ops.turnabout.show_parts(parts="guide:2") == {"FINISHED"}
    bpy.ops.ed.undo_push(message="parts shown")
    assert _data_counts() != before
    bpy.ops.ed.undo()
    assert _data_counts() == before
    assert not bpy.data.objects["Eversion"].hide_render


@pytest.mark.usefixtures("blank")
def test_slice_and_level_point_buttons_call_the_rigs_and_clear_views_removes_them(tmp_path):
    ob = _build(frames=6, size=(64, 48), samples=2)
    bpy.context.view_layer.objects.active = ob
    before = _data_counts()
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
    after = _data_counts()
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

    ob = _build(frames=4)
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
    _, tri = _evaluated(view, 6)
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
