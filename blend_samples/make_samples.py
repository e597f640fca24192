"""Regenerate the sample .blend files in this folder.

    python blend_samples/make_samples.py            # with the bpy module installed
    blender -b -P blend_samples/make_samples.py     # inside Blender, from a source checkout

default_eversion.blend  the default build: default controls, the default mesh, the default
                        480 frames; a stored shape every KEY_STEP_DEFAULT frames with exact
                        linear blends between (every frame, blends included, passes the
                        checker)
fast_preview.blend      a lighter mesh (PREVIEW_MESH) over PREVIEW_FRAMES frames with
                        Workbench settings, for quick looks; every frame passes the checker
broken_pinch.blend      a hand-made shape-key animation with a pinch and a spike, which the
                        checker must flag (for trying the Check panel): it fails on purpose

A sample that does not pass the checker says so in its name ("broken"); the frame count of
each passing sample is at least what its mesh needs (no vertex moves more than one local
edge length per frame). tests/test_blend_samples.py checks each verdict against the name.
Each file is kept under 8 MB (they are in git), all of them under 50 MB.
"""

from __future__ import annotations

import importlib.util
import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
REPO = os.path.dirname(HERE)
LIMIT_BYTES = 8_000_000


def _import_addon():
    try:
        import turnabout_blender  # noqa: F401
    except ModuleNotFoundError:
        spec = importlib.util.spec_from_file_location(
            "_ta_run", os.path.join(REPO, "tools", "run_in_blender.py")
        )
        mod = importlib.util.module_from_spec(spec)
        spec.loader.exec_module(mod)
        mod._import_addon_package()
    import turnabout_blender

    return turnabout_blender


#: Frames between stored shapes of the default sample (blends in between are exact).
KEY_STEP_DEFAULT = 32
#: Longitude samples x latitude rings of the preview sample (bend-adaptive spacing).
PREVIEW_MESH = (256, 64)
#: Frames of the preview sample, and frames between its stored shapes.
PREVIEW_FRAMES, KEY_STEP_PREVIEW = 240, 16


def make_default(path: str) -> None:
    from turnabout.eversion import DEFAULT_FRAMES, Controls
    from turnabout_blender import headless

    headless.build_scene(
        Controls(),
        frames=DEFAULT_FRAMES,
        key_step=KEY_STEP_DEFAULT,
        size=(640, 480),
        samples=64,
    )
    headless.save_blend(path)


def make_preview(path: str) -> None:
    from turnabout.eversion import Controls
    from turnabout.eversion.spacing import mesh_for
    from turnabout_blender import headless

    controls = Controls()
    headless.build_scene(
        controls,
        frames=PREVIEW_FRAMES,
        key_step=KEY_STEP_PREVIEW,
        mesh=mesh_for(controls, *PREVIEW_MESH),
        engine="workbench",
        size=(320, 240),
    )
    headless.save_blend(path)


# hand-made keyframes: (shape key, [(frame, value), ...])
BROKEN_KEYS = (
    ("Squash", [(1, 0.0), (6, 1.0), (11, 0.0)]),
    ("Pinch", [(14, 0.0), (18, 1.0), (22, 0.0)]),
    ("Spike", [(30, 0.0), (32, 1.0), (34, 0.0)]),
)
BROKEN_RANGE = (1, 40)


def make_broken(path: str) -> None:
    """A round sphere animated by hand with relative shape keys; two of them break it.

    Squash flattens it smoothly (fine); Pinch pulls the northern cap onto the pole (faces
    collapse to nothing); Spike pulls one equator vertex far out (a sharp point).
    """
    import bpy
    import numpy as np

    from turnabout.mesh import round_sphere_positions, uniform_sphere_mesh
    from turnabout_blender import bake, headless, look

    headless.empty_file()
    scene = bpy.context.scene
    sphere = uniform_sphere_mesh(48, 23)
    base = round_sphere_positions(sphere).astype(np.float32)
    me = bake.new_sphere_mesh("Hand-made", sphere, base, strips=8)
    ob = bpy.data.objects.new("Hand-made", me)
    scene.collection.objects.link(ob)
    ob.shape_key_add(name="Basis", from_mix=False)

    squash = base * np.array([1.15, 1.15, 0.55], np.float32)
    _, lat = sphere.vertex_params
    pinch = base.copy()
    pinch[lat > np.radians(55)] = base[-1]  # the cap onto the north pole
    spike = base.copy()
    equator = int(
        np.argmin(np.abs(lat) + (np.arange(len(lat)) == 0))
    )  # a vertex on the middle ring
    spike[equator] *= 2.2
    for name, target in (("Squash", squash), ("Pinch", pinch), ("Spike", spike)):
        kb = ob.shape_key_add(name=name, from_mix=False)
        kb.points.foreach_set("co", target.ravel())
        kb.value = 0.0
    for name, keys in BROKEN_KEYS:
        kb = me.shape_keys.key_blocks[name]
        for frame, value in keys:
            kb.value = value
            kb.keyframe_insert("value", frame=frame)
    look.apply_look(ob, headless.look_settings())
    scene.frame_start, scene.frame_end = BROKEN_RANGE
    scene.frame_set(1)
    headless.configure_render(scene, "cycles", (320, 240), 16)
    headless.add_camera_and_lights(scene, headless.extent_of(ob))
    bpy.context.view_layer.objects.active = ob
    ob.select_set(True)
    headless.save_blend(path)


SAMPLES = {
    "default_eversion.blend": make_default,
    "fast_preview.blend": make_preview,
    "broken_pinch.blend": make_broken,
}


def main(out_dir: str = HERE, names=None) -> int:
    _import_addon()
    for name, maker in SAMPLES.items():
        if names and name not in names:
            continue
        path = os.path.join(out_dir, name)
        maker(path)
        size = os.path.getsize(path)
        print(f"wrote {path} ({size / 1e6:.2f} MB)")
        if size > LIMIT_BYTES:
            print(f"  {name} is over {LIMIT_BYTES / 1e6:.0f} MB: do not commit it", file=sys.stderr)
            return 1
    return 0


if __name__ == "__main__":
    argv = sys.argv[sys.argv.index("--") + 1 :] if "--" in sys.argv else sys.argv[1:]
    sys.exit(main(argv[0] if argv else HERE, argv[1:]))
