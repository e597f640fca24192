"""Scenes and renders without the interface: camera, light, material, baked eversion.

Used by the ``turnabout scene`` / ``render`` / ``demo`` commands, through the bpy module
or inside ``blender -b -P tools/run_in_blender.py -- ...``.
"""

from __future__ import annotations

import atexit
import contextlib
import ctypes
import math
import os
import sys
import tempfile
from types import SimpleNamespace

import bpy
import numpy as np

from turnabout.baking.plan import plan_bake, refuse_if_too_big
from turnabout.frame_ranges import frame_path
from turnabout.output import atomic_write, check_output_file, check_suffix, make_output_folder

from . import bake, look
from .props import GUIDE_TINT, INNER_COLOUR, OUTER_COLOUR

CAMERA_NAME = "Turnabout camera"
LIGHT_NAME = "Turnabout key light"
FILL_NAME = "Turnabout fill light"
ENGINES = {"cycles": "CYCLES", "workbench": "BLENDER_WORKBENCH"}


class HeadlessError(ValueError):
    """Bad command-line input; the message names it and what is allowed."""


def ensure_registered() -> None:
    """Register the add-on's classes once per process (for its settings and operators)."""
    if not hasattr(bpy.types.Scene, "turnabout"):
        from . import register

        register()
        if bpy.app.version < (5, 0, 0) and not bpy.app.binary_path:
            # the bpy module (no Blender binary) of 4.2 crashes, and that of 4.5 hangs, when
            # the process exits with Python operators still registered: take ours out first
            atexit.register(_unregister_at_exit)


def _unregister_at_exit() -> None:
    if hasattr(bpy.types.Scene, "turnabout"):
        from . import unregister

        unregister()


def empty_file() -> None:
    bpy.ops.wm.read_homefile(use_empty=True, use_factory_startup=True)
    ensure_registered()
    # rendered frames land beside the .blend rather than in a system folder
    bpy.context.scene.render.filepath = "//render/"
    repeatable_image_metadata(bpy.context.scene)


def repeatable_image_metadata(scene) -> None:
    """Leave the wall-clock date, the render time and the frame number out of the images'
    metadata, so a frame's PNG is the same bytes however and whenever it is rendered.

    Blender writes all three into every PNG by default. The date and render time change
    from run to run; the frame number is padded to the digits of the last frame rendered, so
    a chunk ending at frame 6 wrote "1" where the whole range wrote "01". The pixels never
    differed. The frame number stays in the file name; the other fields (scene, camera,
    file name) depend on the file alone.
    """
    r = scene.render
    r.use_stamp_date = r.use_stamp_render_time = r.use_stamp_frame = False


def look_settings(outer=OUTER_COLOUR, inner=INNER_COLOUR, strips=False, tint=GUIDE_TINT):
    return SimpleNamespace(
        outer_colour=tuple(outer),
        inner_colour=tuple(inner),
        colour_strips=bool(strips),
        guide_tint=tuple(tint),
    )


def extent_of(ob) -> float:
    """Largest distance from the origin reached by any stored shape of ``ob`` (1.0 if none)."""
    key = ob.data.shape_keys if ob.type == "MESH" else None
    blocks = list(key.key_blocks) if key is not None else []
    if not blocks:
        return 1.0
    buf = np.empty(len(ob.data.vertices) * 3, np.float32)
    r = 0.0
    for kb in blocks:
        kb.points.foreach_get("co", buf)
        r = max(r, float(np.sqrt((buf.reshape(-1, 3) ** 2).sum(axis=1).max())))
    return r


def add_camera_and_lights(scene, radius: float = 1.0, aspect: float = 4 / 3):
    """Camera aimed at the origin framing a ball of ``radius``, two lights, a dark world."""
    from mathutils import Vector

    # 50 mm lens on a 36 mm sensor: half field of view along the shorter side
    half = math.atan(18.0 / 50.0 / max(aspect, 1.0 / aspect))
    distance = 1.08 * max(radius, 0.5) / math.sin(half)
    height = 0.25 * distance

    cam_data = bpy.data.cameras.get(CAMERA_NAME) or bpy.data.cameras.new(CAMERA_NAME)
    cam_data.lens = 50.0
    cam = bpy.data.objects.get(CAMERA_NAME)
    if cam is None:
        cam = bpy.data.objects.new(CAMERA_NAME, cam_data)
        scene.collection.objects.link(cam)
    cam.location = (0.0, -distance, height)
    aim = Vector((0.0, 0.0, 0.0)) - Vector(cam.location)
    cam.rotation_euler = aim.to_track_quat("-Z", "Y").to_euler()
    scene.camera = cam

    for name, loc, energy, size in (
        (LIGHT_NAME, (3.0, -4.0, 5.0), 600.0, 2.0),
        (FILL_NAME, (-4.5, -2.0, 1.0), 250.0, 4.0),
    ):
        data = bpy.data.lights.get(name) or bpy.data.lights.new(name, "AREA")
        data.energy = energy
        data.size = size
        ob = bpy.data.objects.get(name)
        if ob is None:
            ob = bpy.data.objects.new(name, data)
            scene.collection.objects.link(ob)
        ob.location = loc
        ob.rotation_euler = (Vector((0, 0, 0)) - Vector(loc)).to_track_quat("-Z", "Y").to_euler()

    world = scene.world or bpy.data.worlds.new("Turnabout world")
    scene.world = world
    if getattr(world, "node_tree", None) is None:
        world.use_nodes = True
    bg = next((n for n in world.node_tree.nodes if n.type == "BACKGROUND"), None)
    if bg is not None:
        bg.inputs[0].default_value = (0.03, 0.03, 0.03, 1.0)
        bg.inputs[1].default_value = 1.0
    world.color = (0.03, 0.03, 0.03)
    return cam


def check_render_settings(engine: str, size, samples: int) -> None:
    """Refuse an engine, image size or sample count Blender cannot use (before any work)."""
    if engine not in ENGINES:
        raise HeadlessError(f"--engine: must be one of {', '.join(ENGINES)}, got {engine!r}")
    w, h = size
    if not (8 <= w <= 16384 and 8 <= h <= 16384):
        raise HeadlessError(f"--size: width and height must be 8-16384 pixels, got {w}x{h}")
    if samples < 1:
        raise HeadlessError(f"--samples: must be at least 1, got {samples}")


def configure_render(
    scene, engine: str = "cycles", size=(320, 240), samples: int = 16, transparent: bool = False
) -> None:
    """Render settings: Cycles on the CPU (default) or Workbench, PNG RGBA at ``size``.

    The film is opaque by default: the dark world is the backdrop the side colours were
    chosen against, and an opaque PNG looks the same in every viewer (a transparent one is
    shown on white or a checkerboard). Pass ``transparent=True`` to composite the surface.
    """
    check_render_settings(engine, size, samples)
    w, h = size
    r = scene.render
    r.engine = ENGINES[engine]
    r.resolution_x, r.resolution_y, r.resolution_percentage = int(w), int(h), 100
    r.film_transparent = transparent
    r.image_settings.file_format = "PNG"
    r.image_settings.color_mode = "RGBA"
    # a saved scene renders on a farm as frame_0001.png; _render_still turns this off for
    # the moment it writes to a temporary name
    r.use_file_extension = True
    scene.view_settings.view_transform = "Standard"  # the side colours as chosen
    if engine == "cycles":
        scene.cycles.device = "CPU"
        scene.cycles.samples = int(samples)
        scene.cycles.use_denoising = False
        scene.cycles.use_adaptive_sampling = False
        scene.cycles.max_bounces = 4
    else:
        shading = scene.display.shading
        shading.light = "STUDIO"
        shading.color_type = "MATERIAL"


@contextlib.contextmanager
def blender_output_silenced():
    """Send what Blender prints to standard output ("Saved: ..." per render) to /dev/null.

    Blender writes from C, past Python's sys.stdout, so the redirection is at the file
    descriptor: fd 1 points at /dev/null inside the block and back afterwards, with C's
    buffers flushed on both sides so nothing leaks into a progress bar later.
    """
    try:
        fd = sys.stdout.fileno()
    except (AttributeError, OSError, ValueError):  # no real stdout (captured): nothing to do
        yield
        return
    libc = ctypes.CDLL(None)
    sys.stdout.flush()
    libc.fflush(None)
    saved = os.dup(fd)
    devnull = os.open(os.devnull, os.O_WRONLY)
    try:
        os.dup2(devnull, fd)
        yield
    finally:
        libc.fflush(None)
        os.dup2(saved, fd)
        os.close(saved)
        os.close(devnull)


def _render_still(scene, tmp: str) -> None:
    """Render the scene's current frame from its camera into the file ``tmp``."""
    r = scene.render
    extension = r.use_file_extension
    r.filepath, r.use_file_extension = tmp, False  # write exactly to tmp
    try:
        with blender_output_silenced():
            bpy.ops.render.render(write_still=True, scene=scene.name)
    finally:
        r.use_file_extension = extension
    if os.path.getsize(tmp) == 0:  # the writer made it empty: nothing was rendered into it
        raise HeadlessError(f"render: Blender wrote no image for frame {scene.frame_current}")


def render_frames(
    scene, out_dir: str, frames, resume: bool = True, progress=None, render_one=None
):
    """Render each frame to ``out_dir/frame_NNNN.png``; returns (rendered, skipped) lists.

    With ``resume`` frames whose PNG already exists are skipped. Each image is written
    through the one atomic writer (``turnabout.output``), so an interrupted run leaves no
    half file. ``render_one(path, frame)``, when given, writes a frame's image instead of
    a plain render from the scene camera (it must write atomically too). ``out_dir`` is
    made if missing (its parent must exist).
    """
    make_output_folder(out_dir, "output folder")
    repeatable_image_metadata(scene)
    if scene.camera is None:
        raise HeadlessError("scene: has no camera to render from")
    rendered, skipped = [], []
    original = scene.frame_current
    try:
        for i, f in enumerate(frames):
            path = frame_path(out_dir, f)
            if resume and os.path.isfile(path) and os.path.getsize(path) > 0:
                skipped.append(f)
            elif render_one is not None:
                with blender_output_silenced():
                    render_one(path, f)
                rendered.append(f)
            else:
                scene.frame_set(f)
                atomic_write(path, lambda tmp: _render_still(scene, tmp))
                rendered.append(f)
            if progress is not None:
                progress(i + 1, len(frames))
    finally:
        scene.frame_set(original)
    return rendered, skipped


def read_png(path: str) -> np.ndarray:
    """Pixels of a PNG as (height, width, 4) float32, top row first."""
    img = bpy.data.images.load(path, check_existing=False)
    try:
        w, h = img.size
        px = np.empty(w * h * 4, np.float32)
        img.pixels.foreach_get(px)
    finally:
        bpy.data.images.remove(img)
    return px.reshape(h, w, 4)[::-1]


def build_scene(
    controls,
    frames: int | None = None,
    frame_start: int = 1,
    key_step: int = 1,
    mesh=None,
    mode: str = "SHAPE_KEYS",
    cache_dir: str | None = None,
    memory_limit_mb: float = 4096.0,
    look_options=None,
    engine: str = "cycles",
    size=(320, 240),
    samples: int = 16,
    progress=None,
    spacing: str | None = None,
):
    """A fresh file with the baked eversion, its material, camera and lights; returns the object.

    ``spacing``: the mesh's spacing ("bend" or "even"), kept in the build record."""
    plan = plan_bake(controls, frames, frame_start, key_step, mesh, mode)
    refuse_if_too_big(plan, memory_limit_mb)
    empty_file()
    scene = bpy.context.scene
    configure_render(scene, engine, size, samples)
    ob = bake.bake_eversion(
        scene,
        plan,
        name="Eversion",
        memory_limit_mb=memory_limit_mb,
        cache_dir=cache_dir or tempfile.gettempdir(),
        progress=progress,
        spacing=spacing,
    )
    look.apply_look(ob, look_options or look_settings())
    bake.set_scene_range(scene, plan)
    scene.frame_set(plan.frame_start)
    add_camera_and_lights(scene, extent_of(ob), size[0] / size[1])
    bpy.context.view_layer.objects.active = ob
    ob.select_set(True)
    return ob


def save_blend(path: str, compress: bool = True) -> str:
    """Save the open file to ``path`` (which must end in .blend and sit in an existing,
    writable folder) through the one atomic writer; returns the absolute path."""
    path = os.path.abspath(path)
    check_suffix(path, (".blend",), "output", "the scene file")
    check_output_file(path, "output")

    def save(tmp: str) -> None:
        # Blender keeps a backup (.blend1) of a file it saves over: save to a new name
        os.remove(tmp)
        with blender_output_silenced():  # "Info: Saved copy as ..." names the temporary file
            bpy.ops.wm.save_as_mainfile(filepath=tmp, compress=compress, copy=True)
        if not os.path.isfile(tmp):
            raise HeadlessError(f"output: Blender did not save {path!r}")

    atomic_write(path, save)
    return path


def point_cache_relative(ob, blend_path: str) -> None:
    """Make a Mesh Cache modifier's path relative to the .blend it is saved in."""
    mod = ob.modifiers.get(bake.MODIFIER_NAME)
    if mod is not None and not mod.filepath.startswith("//"):
        rel = os.path.relpath(mod.filepath, os.path.dirname(os.path.abspath(blend_path)))
        mod.filepath = "//" + rel.replace(os.sep, "/")


def open_blend(path: str) -> None:
    path = os.path.abspath(path)
    if not os.path.isfile(path):
        raise HeadlessError(f"input: no such .blend file {path!r}")
    with open(path, "rb") as fh:
        magic = fh.read(7)
    if (
        magic not in (b"BLENDER",)
        and not magic.startswith(b"\x1f\x8b")
        and not magic.startswith(b"\x28\xb5\x2f\xfd")
    ):
        raise HeadlessError(f"input: {path!r} is not a .blend file")
    with blender_output_silenced():
        bpy.ops.wm.open_mainfile(filepath=path, load_ui=False)
