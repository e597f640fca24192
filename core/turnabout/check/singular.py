"""Singular points: clusters of failing elements, reported as located points.

A vertex fails when its heat (the worst severity of the pinch, crease, fold and tight-bend
metrics at it, 1.0 = at the failure threshold) reaches 1. Failing vertices joined by mesh
edges form one cluster; clusters closer than a few local edge lengths are merged, so the
broken-up neighbourhood of a Whitney umbrella counts once.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .metrics import FrameMetrics
from .thresholds import METRICS, Thresholds, severity
from .topology import MeshTopology, component_labels


@dataclass(frozen=True)
class SingularPoint:
    """One cluster of failing vertices.

    position : (3,) float64, the worst vertex of the cluster; size : number of vertices;
    worst_vertex : its index; heat : its heat.
    """

    position: np.ndarray
    size: int
    worst_vertex: int
    heat: float

    def to_dict(self) -> dict:
        return {
            "position": [float(x) for x in self.position],
            "size": int(self.size),
            "worst_vertex": int(self.worst_vertex),
            "heat": float(self.heat),
        }


def _vertex_max_over_faces(values: np.ndarray, topo: MeshTopology) -> np.ndarray:
    """(V,) max over each vertex's faces of a per-face (M,) array."""
    per_corner = np.concatenate([values, values, values]).take(topo.slot_major_corner_order)
    out = np.full(topo.n_vertices, -np.inf)
    used = topo.used_vertices
    starts = topo.vertex_corner_starts[:-1]
    out[used] = np.maximum.reduceat(per_corner, starts[used])
    return out


def _vertex_max_over_edges(values: np.ndarray, topo: MeshTopology) -> np.ndarray:
    """(V,) max over each vertex's edges of a per-edge (E,) array."""
    e = topo.edges
    out = np.full(topo.n_vertices, -np.inf)
    np.maximum.at(out, e[:, 0], values)
    np.maximum.at(out, e[:, 1], values)
    return out


def vertex_heat(
    fm: FrameMetrics, topo: MeshTopology, th: Thresholds, include_step: bool = True
) -> np.ndarray:
    """(V,) float64 worst local severity at each vertex (1.0 = at the failure threshold)."""
    heat = np.zeros(topo.n_vertices)
    for spec in METRICS:
        if spec.name == "step" and not include_step:
            continue
        sev = severity(spec, getattr(fm, spec.name), th)
        if spec.element == "face":
            sev = _vertex_max_over_faces(sev, topo)
        elif spec.element == "edge":
            sev = _vertex_max_over_edges(sev, topo)
        heat = np.maximum(heat, sev)
    heat[~topo.used_vertices] = 0.0
    return heat


def failing_clusters(
    heat: np.ndarray,
    positions: np.ndarray,
    topo: MeshTopology,
    local_length: np.ndarray,
    merge_lengths: float = 3.0,
) -> list[SingularPoint]:
    """Clusters of vertices with heat >= 1 (see module docstring)."""
    bad = heat >= 1.0
    if not bad.any():
        return []
    idx = np.flatnonzero(bad)
    e = topo.edges
    both = bad[e[:, 0]] & bad[e[:, 1]]
    u, v = e[both, 0], e[both, 1]
    label = component_labels(topo.n_vertices, u, v)
    groups, inverse = np.unique(label[idx], return_inverse=True)
    inverse = inverse.ravel()
    P = np.asarray(positions, np.float64)
    # merge clusters whose vertices come within a few local edge lengths
    k = groups.size
    reach = merge_lengths * float(np.median(local_length[idx])) if idx.size else 0.0
    if k > 1 and idx.size <= 20000:
        pts = P[idx]
        parent = np.arange(k)
        # pairwise vertex distances in blocks (failing sets are small)
        for start in range(0, idx.size, 2048):
            d = np.linalg.norm(pts[start : start + 2048, None] - pts[None], axis=-1)
            ii, jj = np.nonzero(d <= reach)
            gi, gj = inverse[start + ii], inverse[jj]
            diff = gi != gj
            for a, b in zip(gi[diff].tolist(), gj[diff].tolist(), strict=True):
                ra, rb = a, b
                while parent[ra] != ra:
                    ra = parent[ra]
                while parent[rb] != rb:
                    rb = parent[rb]
                if ra != rb:
                    parent[max(ra, rb)] = min(ra, rb)
        roots = np.array([_root(parent, g) for g in range(k)])
        _, inverse = np.unique(roots[inverse], return_inverse=True)
        inverse = inverse.ravel()
        k = int(inverse.max()) + 1
    out = []
    for g in range(k):
        members = idx[inverse == g]
        worst = int(members[np.argmax(heat[members])])
        out.append(
            SingularPoint(
                position=P[worst].copy(),
                size=int(members.size),
                worst_vertex=worst,
                heat=float(heat[worst]),
            )  # fmt: skip
        )
    out.sort(key=lambda s: -s.heat)
    return out


def _root(parent: np.ndarray, g: int) -> int:
    while parent[g] != g:
        g = parent[g]
    return int(g)
