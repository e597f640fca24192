"""View rigs in Blender: the band camera keeps the band's image size, the side-by-side render,
level-point glyphs where the points project, the signed count, files without the add-on,
refusals that leave the file unchanged."""

from __future__ import annotations

import json

import numpy as np
import pytest
from blender_support import (
    blank,  # noqa: F401  (fixture used by name)
    bpy,
    fcurves_of,
    run_python,
)

from turnabout.frame_ranges import frame_path

pytestmark = pytest.mark.blender

FRAMES = 36
SIZE = (160, 120)


def _scene(frames=FRAMES, size=SIZE, samples=8):
    from turnabout.eversion import Controls
    from turnabout.mesh import uniform_sphere_mesh
    from turnabout_blender import headless

    ob = headless.build_scene(
        Controls(), frames=frames, mesh=uniform_sphere_mesh(64, 16), size=size, samples=samples
    )
    return bpy.context.scene, ob


def _band_rig(scene, ob, which=5, count=8):
    from turnabout_blender import view_rigs

    return view_rigs.add_band_rig_for(scene, ob, which, count)


def _world_band_points(scene, ob, vertex_ids):
    """World positions of the eversion's band vertices at the current frame, (k, 3)."""
    me = ob.evaluated_get(bpy.context.evaluated_depsgraph_get()).data
    buf = np.empty(len(me.vertices) * 3, np.float32)
    me.vertices.foreach_get("co", buf)
    local = buf.reshape(-1, 3)[vertex_ids].astype(np.float64)
    m = np.array(ob.matrix_world)
    return local @ m[:3, :3].T + m[:3, 3]


def _project(scene, cam, points):
    """Blender's own projection of world points: (k, 3) normalised frame x, y and depth."""
    from bpy_extras.object_utils import world_to_camera_view
    from mathutils import Vector

    return np.array([tuple(world_to_camera_view(scene, cam, Vector(p))) for p in points])


def _band_vertices(ob, which=5, count=8):
    from turnabout.views import slices
    from turnabout_blender.view_objects import eversion_info, sphere_of

    mesh = sphere_of(ob, eversion_info(ob))
    return slices.band_vertices(mesh, slices.latitude_bands(count), which)


def _highlight(rgba):
    """Pixels of the band colour (lemon: red and green high, blue low)."""
    r, g, b, a = np.moveaxis(rgba, -1, 0)
    return (a > 0.5) & (r > 0.8) & (g > 0.75) & (b < 0.35)


def _bbox_size(mask) -> float:
    ys, xs = np.nonzero(mask)
    return float(max(xs.max() - xs.min() + 1, ys.max() - ys.min() + 1))


@pytest.mark.usefixtures("blank")
def test_band_camera_keeps_the_band_the_same_size_in_the_image(tmp_path):
    from turnabout_blender import headless, view_rigs

    scene, ob = _scene()
    made = _band_rig(scene, ob)
    top, side = made["top"], made["side"]
    assert scene.camera == top and side is not None and made["highlight"] is not None
    ids = _band_vertices(ob)
    w, h = SIZE
    sizes, radii = [], []
    for f in range(1, FRAMES + 1):
        scene.frame_set(f)
        xyz = _project(scene, top, _world_band_points(scene, ob, ids))
        # in front and not cut away; the cutaway clears most of the way down to the band
        assert xyz[:, 2].min() > top.data.clip_start > 0.8 * xyz[:, 2].min()
        assert np.all((xyz[:, :2] > -1e-6) & (xyz[:, :2] < 1 + 1e-6))  # inside the frame
        extent = (xyz[:, :2].max(axis=0) - xyz[:, :2].min(axis=0)) * (w, h)
        sizes.append(float(extent.max()))
        radii.append(float(np.hypot((xyz[:, 0] - 0.5) * w, (xyz[:, 1] - 0.5) * h).max()))
    sizes, radii = np.array(sizes), np.array(radii)
    for name, v in (("bounding box", sizes), ("radius from the centre", radii)):
        variation = np.abs(v / v[0] - 1).max()
        print(f"band image {name}: {v.min():.1f}-{v.max():.1f} px, variation {variation:.5f}")
        assert variation <= 0.10

    # the same on rendered frames: the highlighted band's pixel bounding box
    out = tmp_path / "top"
    rendered = []
    for f in (1, 9, 18):  # 18: the middle, where other sheets pass above the band
        scene.camera = top
        headless.render_frames(scene, str(out), [f], resume=False)
        rgba = headless.read_png(frame_path(str(out), f))
        band = _highlight(rgba)
        assert band.sum() > 30, f
        rendered.append(_bbox_size(band))
    print("rendered band sizes (px):", rendered, "projected:", sizes[[0, 8]])
    assert abs(rendered[1] / rendered[0] - 1) <= 0.10
    assert abs(rendered[0] / sizes[0] - 1) <= 0.15  # the render agrees with the projection

    # side by side: both views in one image, twice the width
    scene.frame_set(3)
    path = view_rigs.render_side_by_side(scene, str(tmp_path / "both.png"), 9, ob=ob)
    both = headless.read_png(path)
    assert both.shape == (h, 2 * w, 4)
    for half in (both[:, :w], both[:, w:]):
        assert (half[..., 3] > 0.5).mean() > 0.03  # the surface shows in both halves
    assert _highlight(both[:, w:]).sum() > 0  # the side view shows where the band is
    assert scene.camera == top and scene.frame_current == 3  # both restored


def _visible(scene, ob, cam, points, slack):
    """Per point: the eversion does not hide it from ``cam`` (ray cast against the evaluated
    surface, with ``slack`` of room in front of the point)."""
    from mathutils import Vector
    from mathutils.bvhtree import BVHTree

    dg = bpy.context.evaluated_depsgraph_get()
    tree = BVHTree.FromObject(ob, dg)  # object space
    inv = ob.matrix_world.inverted()
    eye = inv @ cam.matrix_world.translation
    out = []
    for p in points:
        target = inv @ Vector(p)
        ray = target - eye
        dist = ray.length
        hit = tree.ray_cast(eye, ray.normalized(), dist)
        out.append(hit[0] is None or hit[3] >= dist - slack)
    return np.array(out, bool)


def _colour_masks(rgba):
    """Pixels near each marker colour as written to the PNG (sRGB)."""
    from turnabout_blender import view_rigs

    def srgb(c):
        c = np.asarray(c[:3], float)
        return np.where(c <= 0.0031308, 12.92 * c, 1.055 * c ** (1 / 2.4) - 0.055)

    rgb = rgba[..., :3]
    return [
        (rgba[..., 3] > 0.5) & (np.linalg.norm(rgb - srgb(c), axis=-1) < 0.2)
        for c in view_rigs.MARKER_COLOURS
    ]


@pytest.mark.usefixtures("blank")
def test_level_markers_show_where_the_points_project_and_the_count_is_animated(tmp_path):
    from scipy import ndimage

    from turnabout.views.levels import level_points
    from turnabout_blender import headless, view_rigs

    scene, ob = _scene(frames=24, size=(200, 150), samples=16)
    scene.camera.location, scene.camera.rotation_euler = (0, 0, 6.5), (0, 0, 0)  # from above
    pos = view_rigs.baked_positions(scene, ob)
    levels = level_points(pos, view_rigs.baked_triangles(ob))
    markers = view_rigs.add_level_markers(scene, ob, levels, 1, glyph_size=0.12)

    # the count property follows the core's signed count, constant between frames;
    # Gauss-map degree 1 for every immersed sphere (H. Hopf, "Über die Curvatura integra
    # geschlossener Hyperflächen", Math. Annalen 95, 1926)
    for f in (1, 6, 12, 18, 24):
        scene.frame_set(f)
        assert ob[view_rigs.COUNT_PROP] == levels.signed_count[f - 1] == 1
    fc = fcurves_of(ob).find('["turnabout_signed_count"]')
    assert len(fc.keyframe_points) == 24
    assert all(k.interpolation == "CONSTANT" for k in fc.keyframe_points)
    assert "Gauss map" in ob.id_properties_ui(view_rigs.COUNT_PROP).as_dict()["description"]

    # the markers evaluate to the level points of the scene frame
    for f in (1, 8):
        scene.frame_set(f)
        me = markers.evaluated_get(bpy.context.evaluated_depsgraph_get()).data
        ids = np.empty(len(me.vertices), np.int32)
        me.attributes[view_rigs.POINT_ATTRIBUTE].data.foreach_get("value", ids)
        assert sorted(set(ids.tolist())) == np.nonzero(levels.frame == f - 1)[0].tolist()
    assert len(np.unique(levels.frame)) > 2  # the points change through the motion

    # a rendered frame: each kind's colour at the pixels where its visible points project
    frame = 8  # domes, a bowl and saddles at once, all facing the camera
    scene.frame_set(frame)
    out = tmp_path / "png"
    headless.render_frames(scene, str(out), [frame], resume=False)
    rgba = headless.read_png(frame_path(str(out), frame))
    h, w = rgba.shape[:2]
    cam = scene.camera
    now = levels.frame == frame - 1
    m = np.array(ob.matrix_world)
    world = levels.position[now] @ m[:3, :3].T + m[:3, 3]
    xyz = _project(scene, cam, world)
    px = np.stack([xyz[:, 0] * w, (1 - xyz[:, 1]) * h], axis=1)  # x right, y down
    _, radius = view_rigs._evaluated_bounds(scene, ob, [frame])
    glyph = 0.12 * radius
    # a glyph stands on its point and is one glyph tall: seen from above it shows when no
    # sheet lies more than half a glyph in front of the point, and is buried beyond 1.1
    seen = _visible(scene, ob, cam, world, 0.5 * glyph)
    hidden = ~_visible(scene, ob, cam, world, 1.1 * glyph)
    masks = _colour_masks(rgba)
    kinds = levels.kind[now]
    checked = 0
    for k, mask in enumerate(masks, start=1):
        ys, xs = np.nonzero(mask)
        mine = (kinds == k) & ~hidden
        for x, y in px[(kinds == k) & seen]:
            d = np.hypot(xs + 0.5 - x, ys + 0.5 - y)
            assert d.size and d.min() <= 3.0, (k, x, y)
            checked += 1
        # as many glyphs of this colour as there are points of its kind in view (glyphs of
        # neighbouring points may merge), none away from them
        labels, n = ndimage.label(ndimage.binary_dilation(mask))  # arms cut by the surface
        assert (n > 0) == bool(np.any((kinds == k) & seen))
        assert n <= int(mine.sum())
        for lab in range(1, n + 1):
            yy, xx = np.nonzero(labels == lab)
            near = np.hypot(px[mine, 0][:, None] - xx - 0.5, px[mine, 1][:, None] - yy - 0.5)
            assert near.size and near.min() <= 4.0, (k, lab)
        print(
            f"kind {k}: {int((kinds == k).sum())} points, {int(((kinds == k) & seen).sum())} "
            f"visible, {n} blobs"
        )
    assert checked >= 10 and len(set(kinds[seen].tolist())) == 3
    # the caption in the lower-left corner
    corner = rgba[int(0.75 * h) :, : int(0.5 * w)]
    assert ((corner[..., :3].min(axis=-1) > 0.8) & (corner[..., 3] > 0.5)).sum() > 10


OPEN_WITHOUT_ADDON = """
import sys, json, numpy as np, bpy, addon_utils
bpy.ops.wm.open_mainfile(filepath=sys.argv[1])
assert "turnabout_blender" not in sys.modules
enabled = [m.__name__ for m in addon_utils.modules() if addon_utils.check(m.__name__)[1]]
assert not any("turnabout" in name for name in enabled)
scene = bpy.context.scene
out = {}
for f in (1, 8):
    scene.frame_set(f)
    dg = bpy.context.evaluated_depsgraph_get()
    mk = bpy.data.objects["Eversion level points"].evaluated_get(dg).data
    ids = np.empty(len(mk.vertices), np.int32)
    mk.attributes["turnabout_level_point"].data.foreach_get("value", ids)
    ev = bpy.data.objects["Eversion"].evaluated_get(dg).data
    hl = bpy.data.objects["Eversion band"].evaluated_get(dg).data
    top = bpy.data.objects["Eversion band top"]
    out[f] = {
        "points": sorted(set(ids.tolist())),
        "count": bpy.data.objects["Eversion"]["turnabout_signed_count"],
        "top": list(top.matrix_world.translation),
        "highlight": len(hl.vertices),
        "eversion": len(ev.vertices),
    }
scene.render.resolution_x, scene.render.resolution_y = 48, 36
scene.cycles.samples = 2
scene.frame_set(6)
scene.camera = bpy.data.objects["Eversion band top"]
scene.render.filepath = sys.argv[2]
bpy.ops.render.render(write_still=True)
img = bpy.data.images.load(sys.argv[2])
px = np.empty(48 * 36 * 4, np.float32)
img.pixels.foreach_get(px)
px = px.reshape(-1, 4)
out["band_pixels"] = int(((px[:, 0] > 0.8) & (px[:, 1] > 0.75) & (px[:, 2] < 0.35)).sum())
print("RESULT" + json.dumps(out))
"""


@pytest.mark.usefixtures("blank")
def test_a_saved_file_plays_and_renders_the_rigs_without_the_addon(tmp_path):
    from turnabout.views.levels import level_points
    from turnabout_blender import headless, view_rigs

    scene, ob = _scene(frames=12, size=(64, 48), samples=2)
    made = _band_rig(scene, ob)
    levels = level_points(view_rigs.baked_positions(scene, ob), view_rigs.baked_triangles(ob))
    view_rigs.add_level_markers(scene, ob, levels, 1)
    want = {}
    text = bpy.data.objects["Eversion count text"]
    assert text.parent == made["top"]  # the caption went to the scene camera, the band's
    for f in (1, 8):
        scene.frame_set(f)
        want[f] = list(made["top"].matrix_world.translation)
        assert -text.location.z > made["top"].data.clip_start  # past the cutaway, so seen
    blend = str(tmp_path / "rigs.blend")
    headless.save_blend(blend)
    proc = run_python(
        OPEN_WITHOUT_ADDON, blend, str(tmp_path / "top.png"), user_dir=tmp_path / "user"
    )
    got = json.loads(proc.stdout.split("RESULT", 1)[1].strip().splitlines()[0])
    for f in (1, 8):
        g = got[str(f)]
        assert g["points"] == np.nonzero(levels.frame == f - 1)[0].tolist()
        assert g["count"] == 1
        assert np.allclose(g["top"], want[f], atol=1e-5)
        assert g["highlight"] > 0
    assert got["band_pixels"] > 5


@pytest.mark.usefixtures("blank")
def test_removing_the_rigs_leaves_the_file_as_before():
    from turnabout_blender import view_rigs

    scene, ob = _scene(frames=6, size=(32, 24))
    other = bpy.data.objects.new("another camera", bpy.data.cameras.new("another camera"))
    scene.collection.objects.link(other)  # listed after the stage camera, and the active one:
    scene.camera = other  # it must be the one that comes back
    before = _census()
    cam = scene.camera
    _band_rig(scene, ob)
    view_rigs.add_level_markers_for(scene, ob)
    view_rigs.add_band_rig_for(scene, ob, 2, 8)  # a second call replaces the first rig
    assert len([o for o in bpy.data.objects if o.get(view_rigs.ROLE) == "band top"]) == 1
    view_rigs.remove_band_rig(scene, ob)
    view_rigs.remove_level_markers(scene, ob)
    assert _census() == before
    assert scene.camera == cam
    assert view_rigs.COUNT_PROP not in ob


def _census() -> dict:
    kinds = (
        "objects",
        "meshes",
        "materials",
        "node_groups",
        "cameras",
        "lights",
        "actions",
        "images",
    )
    out = {k: len(getattr(bpy.data, k)) for k in kinds}
    scene = bpy.context.scene
    out["scene objects"] = len(scene.objects)
    out["camera"] = scene.camera.name if scene.camera else None
    return out


def _not_a_mesh(scene, ob):
    return scene.camera


@pytest.mark.parametrize(
    "call, words",
    [
        (lambda s, o, vr: vr.add_band_rig_for(s, o, 8, 8), ["band", "0", "7"]),
        (lambda s, o, vr: vr.add_band_rig_for(s, o, -1, 8), ["band", "0", "7"]),
        (lambda s, o, vr: vr.add_band_rig_for(s, o, 2, 8, up=(0, 0, 0)), ["up", "non-zero"]),
        (lambda s, o, vr: vr.add_level_markers_for(s, o, up=(0.0, 0.0, 0.0)), ["up", "non-zero"]),
        (lambda s, o, vr: vr.add_band_rig_for(s, s.camera, 2, 8), ["object", "mesh", "camera"]),
        (lambda s, o, vr: vr.add_level_markers_for(s, s.camera), ["object", "mesh", "camera"]),
        (
            lambda s, o, vr: vr.add_level_markers(s, o, _levels_with_kind(9), 1),
            ["kind", "1, 2, 3"],
        ),
        (
            lambda s, o, vr: vr.add_level_markers(s, o, _levels_with_kind(1), 1, glyph_size=0),
            ["glyph size", "(0, 1]"],
        ),
    ],
)
@pytest.mark.usefixtures("blank")
def test_bad_input_is_refused_with_a_clear_message_and_nothing_made(call, words):
    from turnabout_blender import view_rigs

    scene, ob = _scene(frames=4, size=(32, 24))
    before = _census()
    with pytest.raises(ValueError) as err:
        call(scene, ob, view_rigs)
    for word in words:
        assert word in str(err.value), (word, str(err.value))
    assert _census() == before


def _levels_with_kind(kind):
    from types import SimpleNamespace

    return SimpleNamespace(
        frame=np.array([0, 1]),
        kind=np.array([1, kind]),
        position=np.zeros((2, 3)),
        signed_count=np.array([1, 1, 1, 1]),
        up=np.array([0.0, 0.0, 1.0]),
    )


@pytest.mark.parametrize("mode, key_step", [("SHAPE_KEYS", 3), ("POINT_CACHE", 1)])
@pytest.mark.usefixtures("blank")
def test_stored_frames_read_back_as_the_depsgraph_evaluates_them(tmp_path, mode, key_step):
    from turnabout.baking.plan import plan_bake
    from turnabout.eversion import Controls
    from turnabout.mesh import uniform_sphere_mesh
    from turnabout_blender import bake, view_rigs

    plan = plan_bake(Controls(), 11, 4, key_step, uniform_sphere_mesh(64, 16), mode)
    scene = bpy.context.scene
    ob = bake.bake_eversion(scene, plan, cache_dir=str(tmp_path))
    ids = np.array([0, 5, 700, 1025])
    fast = view_rigs.baked_positions(scene, ob, ids)
    slow = view_rigs.baked_positions(scene, ob, ids, evaluated=True)
    assert fast.shape == slow.shape == (11, 4, 3)
    assert np.abs(fast - slow).max() <= 1e-5


@pytest.mark.usefixtures("blank")
def test_removing_the_count_keeps_the_objects_own_keyframes():
    from turnabout_blender import view_rigs

    scene, ob = _scene(frames=6, size=(32, 24))
    view_rigs.add_level_markers_for(scene, ob, text=False)
    ob.keyframe_insert("location", index=2, frame=3)  # the user keys the object afterwards
    action = ob.animation_data.action
    view_rigs.remove_level_markers(scene, ob)
    assert ob.animation_data.action == action
    paths = [fc.data_path for fc in _fcurves(ob)]
    assert paths == ["location"]
    assert view_rigs.COUNT_PROP not in ob
    # and on an object that was animated before, only the count's curve goes
    view_rigs.add_level_markers_for(scene, ob, text=False)
    assert sorted(fc.data_path for fc in _fcurves(ob)) == ['["turnabout_signed_count"]', "location"]
    view_rigs.remove_level_markers(scene, ob)
    assert [fc.data_path for fc in _fcurves(ob)] == ["location"]


def _fcurves(ob):
    return list(fcurves_of(ob))
