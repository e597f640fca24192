"""Benchmark of the parts and the symmetry maps (prints figures; asserts nothing).

On the default mesh (8 strips, 47,042 vertices): ``surface_parts`` and
``symmetry_vertex_maps`` + ``symmetry_face_maps`` against a baseline measured in the same
run, ``mesh.triangles()`` (building the face list itself). Goal: each well under 0.2 s on
the default mesh, so a view can recompute them when asked; the face permutations sort
2 x 94k rows for each of the two generators and compose the other 14.

Run: python benchmarks/bench_parts.py [--repeat 5]
"""

from __future__ import annotations

import argparse

from timing import best_of

from turnabout.eversion import Controls, mesh_for
from turnabout.views import surface_parts, symmetry_face_maps, symmetry_vertex_maps


def main(argv=None) -> int:
    p = argparse.ArgumentParser()
    p.add_argument("--repeat", type=int, default=5)
    args = p.parse_args(argv)
    ctl = Controls()
    mesh = mesh_for(ctl)  # runs the fast scan once (cached)
    base = best_of(mesh.triangles, args.repeat)
    parts = best_of(lambda: surface_parts(mesh, ctl.strips), args.repeat)
    vmaps = best_of(lambda: symmetry_vertex_maps(mesh, ctl.strips), args.repeat)
    fmaps = best_of(lambda: symmetry_face_maps(mesh, ctl.strips), args.repeat)
    print(f"mesh: {mesh.n_vertices} vertices, {mesh.triangles().shape[0]} faces")
    print(f"triangles()            {base * 1e3:8.2f} ms  (baseline)")
    for name, t in (("surface_parts", parts), ("symmetry_vertex_maps", vmaps),
                    ("symmetry_face_maps", fmaps)):  # fmt: skip
        print(f"{name:22s} {t * 1e3:8.2f} ms  ratio {t / base:7.1f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
