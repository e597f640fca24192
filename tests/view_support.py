"""Shared set-up for the Blender view tests (tests/test_blender_views*.py): the sphere mesh,
a baked eversion on it, and reading data back from Blender.
"""

from __future__ import annotations

import numpy as np
from blender_support import bpy, counts

STRIPS = 8
MESH = (64, 17)  # an odd ring count: the equator is not a ring, so quads split there
KINDS = ("objects", "meshes", "materials", "node_groups", "actions", "collections")


def sphere_mesh():
    """The test's sphere mesh (MESH longitudes x rings, evenly spaced)."""
    from turnabout.mesh import uniform_sphere_mesh

    return uniform_sphere_mesh(*MESH)


def baked_eversion(frames=8, mode="SHAPE_KEYS", size=(160, 120), cache_dir=None, samples=8):
    """A baked eversion of STRIPS strips on the test's sphere mesh, in a fresh scene."""
    from turnabout.eversion import Controls
    from turnabout_blender import headless

    return headless.build_scene(
        Controls(strips=STRIPS),
        frames=frames,
        mesh=sphere_mesh(),
        mode=mode,
        cache_dir=cache_dir,
        size=size,
        samples=samples,
    )


def data_counts() -> dict:
    """How many data-blocks of each kind exist (blender_support.counts plus KINDS)."""
    out = counts()
    for kind in KINDS:
        out[kind] = len(getattr(bpy.data, kind))
    return out


def evaluated_mesh(ob, frame):
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
