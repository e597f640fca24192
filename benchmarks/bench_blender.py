"""Blender-side speed, as ratios against baselines measured in the same run.

    python benchmarks/bench_blender.py [--frames 240] [--mesh 256x127]

1. Bake: ``bake_eversion`` with positions already evaluated (new mesh, absolute shape
   keys, eval-time F-curve) against the bare loop a bake cannot avoid, shape_key_add +
   points.foreach_set of the same arrays (goal: 1.5x or less). The time to foreach_set
   the arrays into existing key blocks is printed too.
2. Check: the add-on's check (frame_set + depsgraph + foreach_get for every frame, then
   the core checker) against the core checker alone on the same arrays (goal: 2x or less).
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


def _best(fn, repeat: int) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def main(argv=None) -> int:
    p = argparse.ArgumentParser()
    p.add_argument("--frames", type=int, default=240)
    p.add_argument("--mesh", default="256x127")
    p.add_argument("--repeat", type=int, default=2)
    p.add_argument("--no-check", action="store_true")
    args = p.parse_args(argv)

    from turnabout.baking.plan import plan_bake
    from turnabout.eversion import Controls, build
    from turnabout.mesh import uniform_sphere_mesh

    from turnabout_blender import bake, check_objects, headless

    n_lon, n_lat = (int(v) for v in args.mesh.split("x"))
    sphere = uniform_sphere_mesh(n_lon, n_lat)
    controls = Controls()
    t0 = time.perf_counter()
    ev = build(controls, frames=args.frames, mesh=sphere)
    t_core_build = time.perf_counter() - t0
    P = np.ascontiguousarray(ev.positions, np.float32)
    F, V = P.shape[:2]
    print(f"{F} frames x {V} vertices (core build {t_core_build:.2f} s, not timed below)")

    # ---- bake
    def ours():
        headless.empty_file()
        plan = plan_bake(controls, F, 1, 1, sphere)
        bake.bake_eversion(bpy.context.scene, plan, positions=P, memory_limit_mb=1e6)

    def raw_keys():
        headless.empty_file()
        me = bpy.data.meshes.new("raw")
        me.vertices.add(V)
        me.vertices.foreach_set("co", P[0].ravel())
        ob = bpy.data.objects.new("raw", me)
        bpy.context.scene.collection.objects.link(ob)
        for k in range(F):
            ob.shape_key_add(name=str(k), from_mix=False).points.foreach_set("co", P[k].ravel())

    headless.empty_file()
    me = bpy.data.meshes.new("pre")
    me.vertices.add(V)
    ob = bpy.data.objects.new("pre", me)
    bpy.context.scene.collection.objects.link(ob)
    blocks = [ob.shape_key_add(name=str(k), from_mix=False) for k in range(F)]

    def raw_set():
        for k, kb in enumerate(blocks):
            kb.points.foreach_set("co", P[k].ravel())

    t_set = _best(raw_set, args.repeat)
    t_raw = _best(raw_keys, args.repeat)
    t_ours = _best(ours, args.repeat)
    print(
        f"bake   ours {t_ours:.3f} s | shape_key_add+foreach_set {t_raw:.3f} s | "
        f"foreach_set only {t_set:.3f} s"
    )
    print(f"bake   ratio ours / (shape_key_add+foreach_set) = {t_ours / t_raw:.2f}  (goal <= 1.5)")
    print(f"bake   ratio ours / foreach_set into existing keys = {t_ours / t_set:.1f}  (for scale)")

    if args.no_check:
        return 0
    try:
        from turnabout.check import Thresholds, check_animation
    except ImportError as exc:
        print(f"check  skipped: the core checker is not available ({exc})")
        return 0
    ours()
    ob = bpy.context.scene.objects[0]
    faces = ev.faces

    def in_blender():
        steps = check_objects.check_steps(bpy.context, ob, 1, F, None, True)
        return check_objects.run_to_completion(steps)

    def core_only():
        return check_animation(P, faces, thresholds=Thresholds(), intersections=True)

    t_core = _best(core_only, 1)
    t_bl = _best(in_blender, 1)
    print(f"check  in Blender {t_bl:.2f} s | core checker alone {t_core:.2f} s")
    print(f"check  ratio Blender / core = {t_bl / t_core:.2f}  (goal <= 2)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
