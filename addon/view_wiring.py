"""Wiring of the views into the operators and into ``turnabout scene``.

Reads the baked surface back from Blender (through the depsgraph) for the core's slice and
level-point computations and hands the results to the view rigs (``view_rigs``); applies a
checked :class:`~turnabout_blender.view_options.ViewRequest` to a freshly built scene.
"""

from __future__ import annotations

import contextlib
import importlib

import bpy

from . import view_objects as vo
from . import view_stills, view_stripes


def _rigs():
    """The view-rig module (slice camera, side-by-side render, level-point markers)."""
    try:
        return importlib.import_module(".view_rigs", __package__)
    except ModuleNotFoundError:
        raise vo.ViewError(
            "slices and level points: this build of the add-on has no view rigs"
        ) from None


@contextlib.contextmanager
def _evaluated(ob):
    """Show ``ob`` in the viewport while the rigs read it (a hidden object is not evaluated)."""
    hidden = ob.hide_viewport
    ob.hide_viewport = False
    try:
        yield ob
    finally:
        ob.hide_viewport = hidden


def band_rig(context, ob, info: dict, count: int, width, which: int, up) -> str:
    """A camera rig that tracks latitude band ``which`` of ``count`` through the motion."""
    rigs = _rigs()
    if isinstance(count, bool) or int(count) != count or count < 1:
        raise vo.ViewError(f"slices: the band count must be an integer >= 1, got {count}")
    if not 0 <= which < count:
        raise vo.ViewError(
            f"slice: band {which} is out of range; with {count} bands use 0-{count - 1}"
        )
    with _evaluated(ob):
        made = rigs.add_band_rig_for(context.scene, ob, int(which), int(count), width, up)
    return (
        ", ".join(o.name for o in made.values() if hasattr(o, "name"))
        if isinstance(made, dict)
        else str(made)
    )


def side_by_side(context, ob, path: str, frame: int) -> str:
    with _evaluated(ob):
        return str(_rigs().render_side_by_side(context.scene, path, int(frame), ob=ob))


def level_markers(context, ob, info: dict, up, text: bool = True) -> str:
    """Level-point markers and the signed count of every frame of the motion (as an
    animated property, and with ``text`` as a caption in the camera's corner)."""
    rigs = _rigs()
    with _evaluated(ob):
        rigs.add_level_markers_for(context.scene, ob, up, text=bool(text))
    return f"level points of {ob.name} marked"


def remove_rigs(scene, ob, bands: bool = True, levels: bool = True) -> None:
    """Remove the band rig and/or the level-point markers, if the rigs are installed."""
    try:
        rigs = _rigs()
    except vo.ViewError:
        return
    if bands:
        rigs.remove_band_rig(scene, ob)
    if levels:
        rigs.remove_level_markers(scene, ob)


def apply_view_request(scene, ob, request, size=(320, 240)) -> list[str]:
    """Make the views of a checked ViewRequest on the freshly baked ``ob``; returns what was
    made, one line each. The stage camera is aimed at the stills when there are stills."""
    from types import SimpleNamespace

    if request is None or not request.any:
        return []
    info = vo.eversion_info(ob)
    done = []
    if request.stripes is not None:
        view_stripes.set_stripes(
            view_stripes.eversion_material(ob), True, request.stripes, request.stripe_colours
        )
        done.append(f"height stripes every {request.stripes:g}")
    if request.parts is not None:
        vo.make_parts_view(scene, ob, request.parts, info)
        done.append(f"parts: {request.parts.text}")
    if request.reveal is not None:
        by, count = request.reveal
        frames = request.reveal_frames or (scene.frame_start, scene.frame_end)
        vo.add_reveal(scene, ob, by, count, frames, info)
        done.append(f"reveal by {by} over frames {frames[0]}-{frames[1]}")
    context = SimpleNamespace(scene=scene)
    if request.slices is not None:
        made = band_rig(
            context,
            ob,
            info,
            request.slices,
            request.slice_width,
            request.slice_which,
            request.up,
        )
        done.append(f"band {request.slice_which} of {request.slices} tracked: {made}")
    if request.level_points:
        done.append(level_markers(context, ob, info, request.up))
    if request.stills:
        stills = view_stills.add_stills(scene, ob, info)
        stage_for_row(scene, stills, size[0] / size[1])
        done.append("stills: " + ", ".join(s.name for s in stills))
    return done


def stage_for_row(scene, objects, aspect: float):
    """Aim the stage camera at a row of objects along x and move the stage's lights out with
    it (positions and sizes scaled, power by the square, so the row is lit as one ball)."""
    from . import headless

    radius = view_stills.row_radius(objects, aspect)
    cam = headless.add_camera_and_lights(scene, radius, aspect)
    scale = max(radius, 1.0)  # the stage's lights are placed for a ball of radius 1
    for name in (headless.LIGHT_NAME, headless.FILL_NAME):
        light = bpy.data.objects.get(name)
        if light is not None:
            light.location = [scale * c for c in light.location]
            light.data.size *= scale
            light.data.energy *= scale**2
    return cam
