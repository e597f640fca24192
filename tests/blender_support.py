"""Shared set-up for the Blender tests (imported by tests/test_blender_*.py).

Importing this module points Blender's user folder at a fresh temporary directory
*before* bpy is imported, so no test reads or writes the home folder, then imports
bpy (the test module is skipped when the bpy module is not installed).
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile

if "bpy" not in sys.modules:
    os.environ["BLENDER_USER_RESOURCES"] = tempfile.mkdtemp(prefix="turnabout-blender-user-")

import numpy as np  # noqa: E402
import pytest  # noqa: E402

bpy = pytest.importorskip("bpy")

REPO = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))

# data kinds whose counts a refused operation must leave unchanged
COUNTED = ("objects", "meshes", "materials", "shape_keys", "actions", "curves", "images")


#: For tests that open the .blend samples: Blender 5.0 saved them, with the file header
#: 5.0 introduced; Blender 4.5 reads it, 4.2 reports "not a blend file".
needs_5_0_files = pytest.mark.skipif(
    bpy.app.version < (4, 5, 0),
    reason="the .blend samples are saved by Blender 5.0, whose file header 4.2 cannot read",
)


def fcurves_of(idblock):
    """The F-curves animating ``idblock``: its action's (Blender 4.2/4.3) or, from 4.4 on,
    those of the action's channel bag for ``idblock``'s slot."""
    ad = idblock.animation_data
    if bpy.app.version < (4, 4, 0):
        return ad.action.fcurves
    from bpy_extras import anim_utils

    return anim_utils.action_get_channelbag_for_slot(ad.action, ad.action_slot).fcurves


def fresh_file() -> None:
    """An empty file with the add-on's classes registered."""
    from turnabout_blender import headless

    headless.empty_file()


def counts() -> dict:
    out = {kind: len(getattr(bpy.data, kind)) for kind in COUNTED}
    scene = bpy.context.scene
    out["markers"] = len(scene.timeline_markers)
    out["frame"] = scene.frame_current
    return out


def orphans() -> list[str]:
    """Names of meshes, shape keys, materials and actions nobody uses."""
    out = []
    for kind in ("meshes", "shape_keys", "materials", "actions"):
        out += [f"{kind}:{d.name}" for d in getattr(bpy.data, kind) if d.users == 0]
    return out


def evaluated_positions(ob, frames) -> np.ndarray:
    """Vertex positions of ``ob`` at each scene frame, read through the depsgraph.

    Returns (len(frames), V, 3) float32; written here independently of the add-on's reader.
    """
    scene = bpy.context.scene
    keep = scene.frame_current
    out = []
    for f in frames:
        scene.frame_set(int(f))
        me = ob.evaluated_get(bpy.context.evaluated_depsgraph_get()).data
        buf = np.empty(len(me.vertices) * 3, np.float32)
        me.vertices.foreach_get("co", buf)
        out.append(buf.reshape(-1, 3))
    scene.frame_set(keep)
    return np.stack(out)


def run_python(
    code: str, *args: str, user_dir: str, timeout: float = 180
) -> subprocess.CompletedProcess:
    """Run ``code`` in a fresh Python process with its own Blender user folder."""
    env = dict(os.environ, BLENDER_USER_RESOURCES=str(user_dir))
    proc = subprocess.run(
        [sys.executable, "-c", code, *args],
        env=env,
        capture_output=True,
        text=True,
        timeout=timeout,
        cwd=REPO,
    )
    assert proc.returncode == 0, proc.stdout[-3000:] + proc.stderr[-3000:]
    return proc


def small_mesh(n_lon: int = 64, n_lat: int = 16):
    from turnabout.mesh import uniform_sphere_mesh

    return uniform_sphere_mesh(n_lon, n_lat)


def set_small_build(settings, frames=12, key_step=1, frame_start=1, n_lon=64, n_lat=16) -> None:
    settings.frames = frames
    settings.key_step = key_step
    settings.frame_start = frame_start
    settings.mesh_lon = n_lon
    settings.mesh_lat = n_lat


@pytest.fixture
def blank():
    """A fresh empty file for one test."""
    fresh_file()
    yield bpy
