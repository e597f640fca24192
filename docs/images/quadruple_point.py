"""Draw docs/images/quadruple_point.png: four sheets at the moment they meet in one point.

Four unit spheres centred on a regular tetrahedron of circumradius R, R growing from 0.85 to
1.15 over 12 frames, meet in one point when R = 1 (tests/test_check_quadruple.py). The
figure shows the triangles of the four sheets near the detected point, at the detected
moment, one colour per sheet. Run: python docs/images/quadruple_point.py
"""

from __future__ import annotations

from pathlib import Path

import numpy as np


def main() -> Path:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from mpl_toolkits.mplot3d.art3d import Poly3DCollection
    from turnabout.check.quadruple import quadruple_points
    from turnabout.mesh import round_sphere_positions, uniform_sphere_mesh

    tetra = np.array([[1, 1, 1], [1, -1, -1], [-1, 1, -1], [-1, -1, 1]], float) / np.sqrt(3)

    def turn(a, b):
        rz = np.array([[np.cos(a), -np.sin(a), 0], [np.sin(a), np.cos(a), 0], [0, 0, 1]])
        rx = np.array([[1, 0, 0], [0, np.cos(b), -np.sin(b)], [0, np.sin(b), np.cos(b)]])
        return rx @ rz

    mesh = uniform_sphere_mesh(48, 24)
    p0 = round_sphere_positions(mesh)
    f = mesh.triangles()
    frames = []
    for t in np.linspace(0.0, 1.0, 12):
        R = 0.85 + 0.3 * t
        spheres = [p0 @ turn(0.3 + 0.7 * i, 0.2 + 0.5 * i).T + R * tetra[i] for i in range(4)]
        frames.append(np.concatenate(spheres))
    P = np.array(frames)
    faces = np.concatenate([f + i * len(p0) for i in range(4)])
    q = quadruple_points(P, faces)
    (k,), (when,), (x,) = q.interval, q.time, q.position
    s = when - k
    at = (1 - s) * P[k] + s * P[k + 1]
    tri = at[faces]
    near = np.linalg.norm(tri.mean(axis=1) - x, axis=1) < 0.2
    sheet = np.repeat(np.arange(4), len(f))[near]
    colours = np.array(["#d95f02", "#1b9e77", "#7570b3", "#e7298a"])
    fig = plt.figure(figsize=(4.2, 4.2))
    ax = fig.add_subplot(projection="3d")
    ax.add_collection3d(Poly3DCollection(tri[near], facecolors=colours[sheet], edgecolors="k",
                                         linewidths=0.1, alpha=0.45))  # fmt: skip
    ax.scatter(*x, color="black", s=60, marker="o", depthshade=False, zorder=10)
    from matplotlib.patches import Patch

    ax.legend(handles=[Patch(color=colours[i], alpha=0.6, label=f"sphere {i + 1}")
                       for i in range(4)], loc="lower left", fontsize=7, frameon=False)  # fmt: skip
    r = 0.17
    ax.set(xlim=(x[0] - r, x[0] + r), ylim=(x[1] - r, x[1] + r), zlim=(x[2] - r, x[2] + r))
    ax.set_box_aspect((1, 1, 1))
    ax.view_init(elev=52, azim=80)
    ax.set_axis_off()
    ax.set_title(f"four sheets through one point (black) at frame {when:.3f}", fontsize=9)
    out = Path(__file__).with_suffix(".png")
    fig.savefig(out, dpi=90, bbox_inches="tight")
    plt.close(fig)
    return out


if __name__ == "__main__":
    print(main())
