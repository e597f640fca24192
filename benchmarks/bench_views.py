"""Switching a parts view, against one frame_set, measured in the same run.

    python benchmarks/bench_views.py [--frames 24] [--mesh default|AROUNDxRINGS] [--repeat 7]

The eversion is baked once (shape keys, the default mesh of 47,042 vertices unless
``--mesh`` says otherwise); the parts view is an object sharing that mesh. A *switch* sets
the parts shown (node-group booleans) and evaluates the view again through the depsgraph,
reading its face count: what a user waits for after picking other parts. The baseline is
one ``scene.frame_set`` to another frame with the eversion alone, reading its face count
the same way (the cost of playing one frame). Goal: a switch costs at most 0.2 s on the
default mesh and reuses the bake (no new shape keys, meshes or actions).
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time

os.environ.setdefault("BLENDER_USER_RESOURCES", tempfile.mkdtemp(prefix="turnabout-bench-"))

import bpy  # noqa: E402
import numpy as np  # noqa: E402

SWITCHES = ("guide:0,1 caps", "wave", "tile", "caps", "guide", "all")


def _median(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return float(np.median(times))


def main(argv=None) -> int:
    p = argparse.ArgumentParser()
    p.add_argument("--frames", type=int, default=24)
    p.add_argument("--mesh", default="default")
    p.add_argument("--repeat", type=int, default=7)
    args = p.parse_args(argv)

    from turnabout.eversion import Controls, mesh_for
    from turnabout.mesh import uniform_sphere_mesh

    from turnabout_blender import headless
    from turnabout_blender import view_objects as vo
    from turnabout_blender.view_options import parse_parts

    controls = Controls()
    if args.mesh == "default":
        sphere = mesh_for(controls)
    else:
        n_lon, n_lat = (int(v) for v in args.mesh.split("x"))
        sphere = uniform_sphere_mesh(n_lon, n_lat)
    t0 = time.perf_counter()
    ob = headless.build_scene(controls, frames=args.frames, mesh=sphere, size=(160, 120))
    print(
        f"{args.frames} frames x {sphere.n_vertices} vertices, "
        f"{len(ob.data.polygons)} faces (bake {time.perf_counter() - t0:.1f} s, not timed below)"
    )
    scene = bpy.context.scene
    frames = [scene.frame_start + 1, scene.frame_start + args.frames // 2]
    state = {"i": 0}

    def frame_step(shown=ob):
        state["i"] += 1
        scene.frame_set(frames[state["i"] % 2])
        return len(shown.evaluated_get(bpy.context.evaluated_depsgraph_get()).data.polygons)

    baseline = _median(frame_step, args.repeat)

    info = vo.eversion_info(ob)
    choices = [parse_parts(text, controls.strips) for text in SWITCHES]
    t0 = time.perf_counter()
    view = vo.make_parts_view(scene, ob, choices[0], info)
    t_first = time.perf_counter() - t0
    before = {k: len(getattr(bpy.data, k)) for k in ("meshes", "shape_keys", "actions")}

    def switch():
        state["i"] += 1
        vo.set_choice(view, choices[state["i"] % len(choices)])
        dg = bpy.context.evaluated_depsgraph_get()
        dg.update()
        return len(view.evaluated_get(dg).data.polygons)

    t_switch = _median(switch, max(args.repeat, len(choices)))
    after = {k: len(getattr(bpy.data, k)) for k in ("meshes", "shape_keys", "actions")}
    playing = _median(lambda: frame_step(view), args.repeat)
    print(f"baseline: one frame_set                 {baseline * 1e3:8.1f} ms")
    print(f"first parts view (core labels + object)  {t_first * 1e3:8.1f} ms (once per eversion)")
    print(
        f"switch parts (median)                    {t_switch * 1e3:8.1f} ms  "
        f"= {t_switch / baseline:.2f} x frame_set   goal <= 200 ms: "
        f"{'met' if t_switch <= 0.2 else 'MISSED'}"
    )
    print(f"one frame_set with the view shown        {playing * 1e3:8.1f} ms")
    print(f"data before/after switching: {before} / {after} (the bake is reused)")
    return 0 if t_switch <= 0.2 and before == after else 1


if __name__ == "__main__":
    sys.exit(main())
