"""Benchmark of the immersion checker (prints figures; asserts nothing).

1. All local metrics (pinch, crease, fold, bend, jump, volume, degree, verdicts) for 240
   frames of a 65,536-triangle sphere animation. Goal: 3 s or less. Baseline measured in the
   same run: the bare face normals of the same frames (np.cross), a floor for any per-frame
   check. The baseline runs first, in a fresh process, where its (M, 3) temporaries still
   page-fault on every frame (about half its time; run after the check, once the allocator
   keeps its memory, it takes half as long): keep that order, the goal's ratio was set by it.
2. Self-intersection analysis (double curves and triple points) of one 65,536-triangle frame
   of Boy's surface, as a ratio to Blender's own BVHTree.overlap on the same mesh (needs the
   bpy module for mathutils; skipped otherwise). Goal: 3x or less.
3. The same on mid-motion frames 150, 200, 240, 300 and 330 of the default eversion (480
   frames, 94,080 triangles; hundreds of triple points and tens of thousands of crossing
   triangle pairs each). Goals: at most 3x BVHTree.overlap alone and at most 1.5x build +
   overlap. Each frame is timed ``--repeat`` times, ours and Blender's interleaved, and the
   ratios of each round are printed with their spread (the machine may be shared).

Run: python benchmarks/bench_check.py [--frames 240] [--repeat 3] [--only eversion]
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time

import numpy as np
from timing import best_of

from turnabout.check import check_animation, self_intersections
from turnabout.check.animation import intersection_threads
from turnabout.check.topology import MeshTopology
from turnabout.mesh import round_sphere_positions, uniform_sphere_mesh

# the reference surfaces are test fixtures (tests/surfaces.py)
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tests"))
import surfaces  # noqa: E402


def wobbling_sphere(frames: int) -> tuple[np.ndarray, np.ndarray]:
    mesh = uniform_sphere_mesh(256, 128)
    p0 = round_sphere_positions(mesh)
    th, la = mesh.vertex_params
    t = np.linspace(0.0, 1.0, frames)[:, None]
    bump = 1.0 + 0.08 * np.sin(3 * th)[None] * np.cos(la)[None] * np.sin(2 * np.pi * t)
    positions = (p0[None] * bump[..., None]).astype(np.float32)
    return positions, mesh.triangles()


def bench_local(frames: int, repeat: int) -> None:
    positions, faces = wobbling_sphere(frames)
    print(f"local metrics: {frames} frames x {faces.shape[0]} triangles "
          f"({positions.shape[1]} vertices)")  # fmt: skip

    def normals_only():
        for k in range(frames):
            p = positions[k].astype(np.float64)
            np.cross(p[faces[:, 1]] - p[faces[:, 0]], p[faces[:, 2]] - p[faces[:, 0]])

    base = best_of(normals_only, repeat)
    report = None

    def full():
        nonlocal report
        report = check_animation(positions, faces, intersections=False)

    t = best_of(full, repeat)
    print(f"  baseline (face normals only): {base:.3f} s")
    print(f"  check_animation, intersections off, 1 process: {t:.3f} s  "
          f"({1000 * t / frames:.1f} ms/frame, {t / base:.1f}x baseline, goal 3 s: "
          f"{'met' if t <= 3.0 else 'NOT met'})")  # fmt: skip
    print(f"  verdict {report.verdict}, failing frames {len(report.failing_frames())}")
    t2 = best_of(lambda: check_animation(positions, faces, intersections=False, workers=2), repeat)
    print(f"  same with workers=2 (forked processes): {t2:.3f} s "
          f"({t2 / base:.1f}x baseline, {t / t2:.2f}x faster than 1 process, goal 3 s: "
          f"{'met' if t2 <= 3.0 else 'NOT met'})")  # fmt: skip


def bench_intersections(repeat: int) -> None:
    p, f = surfaces.boy_surface(128)
    topo = MeshTopology(f, len(p))
    print(f"self-intersection: Boy's surface, {f.shape[0]} triangles")
    res = None

    threads = intersection_threads(1)

    def ours():
        nonlocal res
        res = self_intersections(p, topo, threads=threads)

    self_intersections(p, topo)  # warm caches of the topology
    t_ours = best_of(ours, repeat)
    t_one = best_of(lambda: self_intersections(p, topo), repeat)
    print(
        f"  numpy grid + exact events on {threads} thread(s): {1000 * t_ours:.1f} ms "
        f"(1 thread: {1000 * t_one:.1f} ms) "
        f"({res.candidate_pairs} candidate pairs, {res.segments.shape[0]} segments, "
        f"{res.double_curve_count} double curve(s), {res.triple_point_count} triple point(s))"
    )
    if "bpy" not in sys.modules:
        os.environ.setdefault("BLENDER_USER_RESOURCES", tempfile.mkdtemp(prefix="bench-"))
    try:
        import bpy  # noqa: F401  (mathutils ships with the bpy module)
        from mathutils.bvhtree import BVHTree
    except ImportError:
        print("  mathutils not importable: no Blender baseline")
        return
    verts, tris = p.tolist(), f.tolist()
    tree = None

    def build():
        nonlocal tree
        tree = BVHTree.FromPolygons(verts, tris, all_triangles=True)

    t_build = best_of(build, repeat)
    t_overlap = best_of(lambda: tree.overlap(tree), repeat)
    print(f"  Blender BVHTree: build {1000 * t_build:.1f} ms, overlap {1000 * t_overlap:.1f} ms")
    print(f"  ratio to BVHTree.overlap: {t_ours / t_overlap:.2f}x (goal <= 3x: "
          f"{'met' if t_ours <= 3 * t_overlap else 'NOT met'}); "
          f"to build + overlap: {t_ours / (t_build + t_overlap):.2f}x")  # fmt: skip
    t_mu = best_of(lambda: self_intersections(p, topo, use_mathutils=True), repeat)
    print(
        f"  with mathutils as broad phase: {1000 * t_mu:.1f} ms ({t_mu / t_overlap:.2f}x overlap)"
    )


EVERSION_FRAMES = (150, 200, 240, 300, 330)


def bench_eversion_frames(repeat: int) -> None:
    from turnabout.eversion import Controls, evaluate, mesh_for

    if "bpy" not in sys.modules:
        os.environ.setdefault("BLENDER_USER_RESOURCES", tempfile.mkdtemp(prefix="bench-"))
    try:
        import bpy  # noqa: F401
        from mathutils.bvhtree import BVHTree
    except ImportError:
        print("eversion frames: mathutils not importable: no Blender baseline")
        return
    c = Controls()
    mesh = mesh_for(c)
    P = evaluate(c, [f / 479 for f in EVERSION_FRAMES], mesh)
    faces = mesh.triangles()
    topo = MeshTopology(faces, P.shape[1])
    self_intersections(P[0], topo)  # warm the topology's caches
    threads = intersection_threads(1)
    print(f"self-intersection: default eversion frames, {faces.shape[0]} triangles "
          f"(best of {repeat}; ratios per round: min-max; ours on {threads} thread(s), "
          f"the machine's cores, as Blender's overlap query uses them)")  # fmt: skip
    print(
        "  frame  candidates  segments  curves  triples | ours ms  1 thread  build ms  "
        "overlap ms | x overlap       x build+overlap"
    )
    all_r1, all_r2, all_one = [], [], []
    for k, frame in enumerate(EVERSION_FRAMES):
        p = P[k]
        verts, tris = p.tolist(), faces.tolist()
        r1, r2, t_o, t_1, t_b, t_v = [], [], [], [], [], []
        for _ in range(repeat):
            t = time.perf_counter()
            res = self_intersections(p, topo, threads=threads)
            ours = time.perf_counter() - t
            t = time.perf_counter()
            self_intersections(p, topo)
            one = time.perf_counter() - t
            t = time.perf_counter()
            tree = BVHTree.FromPolygons(verts, tris, all_triangles=True)
            build = time.perf_counter() - t
            t = time.perf_counter()
            tree.overlap(tree)
            overlap = time.perf_counter() - t
            r1.append(ours / overlap)
            r2.append(ours / (build + overlap))
            all_one.append(one / overlap)
            t_o.append(ours)
            t_1.append(one)
            t_b.append(build)
            t_v.append(overlap)
        all_r1 += r1
        all_r2 += r2
        print(f"  {frame:5d}  {res.candidate_pairs:10d}  {res.segments.shape[0]:8d}  "
              f"{res.double_curve_count:6d}  {res.triple_point_count:7d} | "
              f"{1000 * min(t_o):7.0f}  {1000 * min(t_1):8.0f}  {1000 * min(t_b):8.0f}  "
              f"{1000 * min(t_v):10.0f} | "
              f"{min(r1):4.2f}-{max(r1):4.2f}x  {min(r2):4.2f}-{max(r2):4.2f}x")  # fmt: skip
    print(f"  all frames and rounds: {min(all_r1):.2f}-{max(all_r1):.2f}x overlap "
          f"(goal <= 3x), {min(all_r2):.2f}-{max(all_r2):.2f}x build + overlap (goal <= 1.5x); "
          f"median {np.median(all_r1):.2f}x and {np.median(all_r2):.2f}x; on 1 thread median "
          f"{np.median(all_one):.2f}x overlap")  # fmt: skip


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--frames", type=int, default=240)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--only", choices=("local", "boy", "eversion"), default=None)
    args = ap.parse_args()
    if args.only in (None, "local"):
        bench_local(args.frames, args.repeat)
    if args.only in (None, "boy"):
        bench_intersections(args.repeat)
    if args.only in (None, "eversion"):
        bench_eversion_frames(args.repeat)


if __name__ == "__main__":
    main()
