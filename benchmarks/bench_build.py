"""Benchmark: baking 240 frames on a 256 x 128 grid, against the plain round sphere.

Prints the absolute time, the ratio to evaluating the round sphere on the same grid and
frames in the same run, and peak memory relative to the output array.
Goal: at most 0.5 s absolute on a 2-core machine, peak memory at most 1.5x the output.

Each time is the best of REPEATS runs (as timeit does): on a virtual machine the first touch
of fresh memory can cost more than the whole computation (0.2-0.9 s for the 90 MiB output
here), and that cost lands on whichever run meets it.
"""

from __future__ import annotations

import time
import tracemalloc

import numpy as np

from turnabout.eversion import Controls, build
from turnabout.mesh import uniform_sphere_mesh

FRAMES = 240
REPEATS = 3


def best_time(fn):
    best, result = float("inf"), None
    for _ in range(REPEATS):
        t0 = time.perf_counter()
        result = fn()
        best = min(best, time.perf_counter() - t0)
        del result
    return best


def round_sphere_frames(mesh, frames):
    out = np.empty((frames, mesh.n_vertices, 3), dtype=np.float32)
    th, la = mesh.vertex_params
    c = np.cos(la)
    for k in range(frames):
        s = 1.0 + 0.0 * k  # one evaluation per frame, like the eversion
        out[k, :, 0] = s * c * np.cos(th)
        out[k, :, 1] = s * c * np.sin(th)
        out[k, :, 2] = s * np.sin(la)
    return out


def main() -> None:
    mesh = uniform_sphere_mesh(256, 128)
    ctl = Controls()
    build(ctl, frames=2, mesh=mesh)  # warm the regularity-check cache and imports
    t_base = best_time(lambda: round_sphere_frames(mesh, FRAMES))
    t_ev = best_time(lambda: build(ctl, frames=FRAMES, mesh=mesh))
    tracemalloc.start()
    ev2 = build(ctl, frames=FRAMES, mesh=mesh)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    out_bytes = ev2.positions.nbytes
    print(f"grid 256 x 128, {FRAMES} frames, {mesh.n_vertices} vertices")
    print(f"round sphere baseline: {t_base:.3f} s  (best of {REPEATS})")
    print(
        f"eversion bake:         {t_ev:.3f} s  (best of {REPEATS}; {t_ev / t_base:.1f}x "
        "baseline; goal 0.5 s)"
    )
    mib = out_bytes / 2**20
    print(f"peak memory / output:  {peak / out_bytes:.2f}x  (output {mib:.1f} MiB; goal 1.5x)")
    assert ev2.positions.shape == (FRAMES, mesh.n_vertices, 3)


if __name__ == "__main__":
    main()
