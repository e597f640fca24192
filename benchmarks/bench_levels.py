"""Benchmark of the level points (prints figures; asserts nothing).

Level points of the default eversion's frames (480 frames of the default mesh) for up = +z,
against a baseline measured in the same run: the bare face normals of the same frames
(np.cross of two gathered edge vectors per face, frame by frame in float64; and the same
cross products component by component over chunks of frames, the fastest plain numpy form),
a floor for any per-frame computation over the faces. Goal: 2x or less. Also prints how many
frames have a signed count other than chi / 2 = 1 (Hopf) for +z and three random directions.

Run: python benchmarks/bench_levels.py [--frames 480] [--repeat 3]
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from timing import best_of

from turnabout.eversion import Controls, evaluate, mesh_for
from turnabout.progress import ProgressBar
from turnabout.views.levels import level_points, level_topology


def main(argv=None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--frames", type=int, default=480)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)

    controls = Controls()
    mesh = mesh_for(controls)
    times = np.linspace(0.0, 1.0, args.frames)
    bar = ProgressBar("evaluating frames", args.frames)
    positions = evaluate(controls, times, mesh, progress=bar).astype(np.float32)
    bar.close()
    faces = mesh.triangles()
    print(f"{args.frames} frames x {faces.shape[0]} triangles ({positions.shape[1]} vertices), "
          "float32 positions")  # fmt: skip

    def normals_only():
        for k in range(positions.shape[0]):
            p = positions[k].astype(np.float64)
            np.cross(p[faces[:, 1]] - p[faces[:, 0]], p[faces[:, 2]] - p[faces[:, 0]])

    f0, f1, f2 = (np.ascontiguousarray(faces[:, k], np.intp) for k in range(3))

    def normals_chunked(chunk: int = 16):
        # the same normals, whole chunks of frames at a time, component by component
        for s in range(0, positions.shape[0], chunk):
            block = positions[s : s + chunk].astype(np.float64)
            x, y, z = block[..., 0], block[..., 1], block[..., 2]
            ax, ay, az = (c.take(f1, axis=1) - c.take(f0, axis=1) for c in (x, y, z))
            bx, by, bz = (c.take(f2, axis=1) - c.take(f0, axis=1) for c in (x, y, z))
            _ = (ay * bz - az * by, az * bx - ax * bz, ax * by - ay * bx)

    t = time.perf_counter()
    topo = level_topology(faces, positions.shape[1])
    setup = time.perf_counter() - t
    base = best_of(normals_only, args.repeat)
    fast = best_of(normals_chunked, args.repeat)
    result = []

    def levels():
        result[:] = [level_points(positions, faces, (0.0, 0.0, 1.0), topology=topo)]

    lev = best_of(levels, args.repeat)
    print(f"  face normals, np.cross per frame (baseline): {base:7.3f} s")
    print(f"  face normals, chunks of frames (baseline):   {fast:7.3f} s")
    print(f"  level points (+z):                           {lev:7.3f} s   ratio "
          f"{lev / base:.2f}x / {lev / fast:.2f}x (goal <= 2x)")  # fmt: skip
    print(f"  topology validation (once):                  {setup:7.3f} s")
    lp = result[0]
    kinds = lp.kind_counts()
    print(f"  level points per frame: {kinds.sum(1).min()}..{kinds.sum(1).max()} "
          f"(domes {kinds[:, 0].max()}, bowls {kinds[:, 1].max()}, saddles "
          f"{kinds[:, 2].max()} at most)")  # fmt: skip
    ups = np.random.default_rng(20261204).normal(size=(3, 3))
    for up in [np.array([0.0, 0.0, 1.0]), *ups]:
        counts = level_points(positions, faces, up, topology=topo).signed_count
        off = int(np.sum(counts != 1))
        u = up / np.linalg.norm(up)
        print(f"  up ({u[0]:+.3f}, {u[1]:+.3f}, {u[2]:+.3f}): signed count "
              f"{counts.min()}..{counts.max()}, frames with count != 1: {off}")  # fmt: skip


if __name__ == "__main__":
    main()
