"""Fixed mesh topology: edges, adjacency, one-rings (built once), and the topology report.

Everything here depends on the face array alone, never on positions, so it is computed
once per animation and shared by every frame's checks.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from functools import cached_property

import numpy as np


def component_labels(n: int, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Connected components of the graph on nodes 0..n-1 with edges (a[i], b[i]).

    Returns (n,) int64: each node's label is the smallest node of its component. Minimum
    labels spread along the edges with pointer jumping (label = label[label]), so each round
    at least halves the longest chain: a few dozen rounds, each linear in n + len(a).
    """
    label = np.arange(n)
    while True:
        low = np.minimum(label[a], label[b])
        new = label.copy()
        np.minimum.at(new, a, low)
        np.minimum.at(new, b, low)
        new = new[new]
        if np.array_equal(new, label):
            return label
        label = new


class TopologyError(ValueError):
    """Faces that cannot be checked (wrong shape, indices out of range)."""


def as_triangles(faces, n_vertices: int) -> np.ndarray:
    """Validated triangles (M, 3) int32 from an (M, 3) int array or a list of polygons.

    Polygons with k > 3 corners are split into fans around their first corner.
    """
    if isinstance(faces, np.ndarray) and faces.ndim == 2 and faces.shape[1] == 3:
        if faces.dtype.kind not in "iu":
            if faces.dtype.kind == "f" and np.all(np.isfinite(faces)) and np.all(faces % 1 == 0):
                faces = faces.astype(np.int64)
            else:
                raise TopologyError(
                    f"faces must be integer vertex indices, got dtype {faces.dtype}"
                )
        tri = faces.astype(np.int64)
    else:
        from ..meshfiles.model import MeshSequenceError, triangulate_polygons

        try:
            tri = triangulate_polygons(faces).astype(np.int64)
        except MeshSequenceError as exc:
            raise TopologyError(str(exc)) from None
    if tri.shape[0] == 0:
        raise TopologyError("there are no faces")
    if tri.min() < 0 or tri.max() >= n_vertices:
        bad = int(tri.max()) if tri.max() >= n_vertices else int(tri.min())
        raise TopologyError(
            f"a face uses vertex index {bad}, but there are {n_vertices} vertices "
            f"(allowed: 0..{n_vertices - 1})"
        )
    return tri.astype(np.int32)


def _csr(keys: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """(order, starts (n+1,)) so that order[starts[i]:starts[i+1]] lists the entries with key i."""
    order = np.argsort(keys, kind="stable")
    counts = np.bincount(keys, minlength=n)
    starts = np.zeros(n + 1, np.int64)
    np.cumsum(counts, out=starts[1:])
    return order, starts


class MeshTopology:
    """Adjacency of a fixed triangle mesh (an invariant shared by all frames).

    faces : (M, 3) int32
    edges : (E, 2) int64, each with edges[:, 0] < edges[:, 1]
    face_edges : (M, 3) int64, edge k of face f joins faces[f, k] and faces[f, (k + 1) % 3]
    edge_face_count : (E,) int64
    edge_faces : (E, 2) int64, the two faces of each manifold edge (-1 where missing)
    """

    def __init__(self, faces: np.ndarray, n_vertices: int):
        self.faces = as_triangles(faces, n_vertices)
        self.n_vertices = int(n_vertices)
        f = self.faces.astype(np.int64)
        m = f.shape[0]
        self.n_faces = m
        a = f.ravel()
        b = f[:, [1, 2, 0]].ravel()
        lo, hi = np.minimum(a, b), np.maximum(a, b)
        key = lo * self.n_vertices + hi
        uniq, inv = np.unique(key, return_inverse=True)
        inv = inv.ravel()
        self.edges = np.stack([uniq // self.n_vertices, uniq % self.n_vertices], axis=1)
        self.n_edges = len(uniq)
        self.face_edges = inv.reshape(m, 3)
        self.half_edge_forward = (a < b).reshape(m, 3)  # half-edge runs lo -> hi
        self.edge_face_count = np.bincount(inv, minlength=self.n_edges)
        order, starts = _csr(inv, self.n_edges)
        he_face = np.repeat(np.arange(m), 3)
        ef = -np.ones((self.n_edges, 2), np.int64)
        first = starts[:-1]
        has1 = self.edge_face_count >= 1
        has2 = self.edge_face_count >= 2
        ef[has1, 0] = he_face[order[first[has1]]]
        ef[has2, 1] = he_face[order[first[has2] + 1]]
        self.edge_faces = ef
        he_fwd = self.half_edge_forward.ravel()
        efwd = np.zeros((self.n_edges, 2), bool)
        efwd[has1, 0] = he_fwd[order[first[has1]]]
        efwd[has2, 1] = he_fwd[order[first[has2] + 1]]
        self._edge_dirs = efwd
        # corners sorted by vertex (CSR one-ring of faces)
        self.corner_order, self.vertex_corner_starts = _csr(a, self.n_vertices)
        self.vertex_degree = np.diff(self.vertex_corner_starts)

    # --- derived adjacency -------------------------------------------------------------

    @cached_property
    def all_vertices_used(self) -> bool:
        return bool(np.all(self.vertex_degree > 0))

    @cached_property
    def has_flipped_edges(self) -> bool:
        """Some edge is traversed the same way by both its faces (inconsistent orientation)."""
        return bool(np.any(self.edge_same_direction))

    @cached_property
    def edge_flip_sign(self) -> np.ndarray:
        """(E,) float64: -1 on edges traversed the same way by both faces, else 1."""
        return np.where(self.edge_same_direction, -1.0, 1.0)

    @cached_property
    def corner_fan_signs_slot_major(self) -> np.ndarray:
        """(3M,) float64: corner_fan_signs in slot-major corner order."""
        return np.ascontiguousarray(self.corner_fan_signs.T).ravel()

    @cached_property
    def inverse_twice_degree(self) -> np.ndarray:
        """(V,) float64: 1 / (2 x number of faces at each vertex), 0 for unused vertices."""
        d = self.vertex_degree.astype(np.float64)
        return np.where(d > 0, 0.5 / np.maximum(d, 1.0), 0.0)

    @cached_property
    def corner_columns(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """The three face columns as contiguous (M,) intp arrays."""
        f = self.faces.astype(np.intp)
        c = np.ascontiguousarray
        return c(f[:, 0]), c(f[:, 1]), c(f[:, 2])

    @cached_property
    def corner_columns_int32(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """The three face columns as contiguous (M,) int32 arrays."""
        f = self.faces
        c = np.ascontiguousarray
        return c(f[:, 0], np.int32), c(f[:, 1], np.int32), c(f[:, 2], np.int32)

    @cached_property
    def corner_index_slot_major(self) -> np.ndarray:
        """(3M,) intp: vertex of each corner, all corners 0 first, then 1, then 2."""
        return np.concatenate(self.corner_columns)

    @cached_property
    def slot_major_corner_order(self) -> np.ndarray:
        """(3M,) intp: slot-major corners sorted by vertex (CSR with vertex_corner_starts)."""
        return np.argsort(self.corner_index_slot_major, kind="stable")

    @cached_property
    def edge_face_columns(self) -> tuple[np.ndarray, np.ndarray]:
        """The two faces of each edge, (E,) intp each (0 where missing; see manifold_edges)."""
        ef = np.where(self.manifold_edges[:, None], self.edge_faces, 0).astype(np.intp)
        return np.ascontiguousarray(ef[:, 0]), np.ascontiguousarray(ef[:, 1])

    @cached_property
    def is_edge_manifold(self) -> bool:
        return bool(np.all(self.edge_face_count == 2))

    @cached_property
    def manifold_edges(self) -> np.ndarray:
        """(E,) bool: edges with exactly two faces."""
        return self.edge_face_count == 2

    @cached_property
    def edge_same_direction(self) -> np.ndarray:
        """(E,) bool: the two faces traverse the edge the same way (inconsistent orientation)."""
        return self.manifold_edges & (self._edge_dirs[:, 0] == self._edge_dirs[:, 1])

    @cached_property
    def edge_row_candidates(self) -> np.ndarray:
        """(E, 2, 2) int64: the edges one row over on each side of every edge (-1 if none).

        For edge (v0, v1) and its face (v0, v1, a) on side s, the faces across the wing
        edges (v0, a) and (v1, a) are (v0, a, x) and (v1, a, y); the candidates on that side
        are their edges (a, x) and (a, y). They touch the apex a, never v0 or v1, so an edge
        continuing (v0, v1) along its own line is never a candidate. On a regular grid (a
        quad grid split by diagonals, a triangular lattice) both are parallel to the edge.
        """
        out = -np.ones((self.n_edges, 2, 2), np.int64)
        ev = self.edges
        fv = self.faces.astype(np.int64)
        ok_edge = self.manifold_edges
        for side in range(2):
            f = self.edge_faces[:, side]
            e = np.flatnonzero((f >= 0) & ok_edge)
            f = f[e]
            fe = self.face_edges[f]  # (k, 3)
            other = fe != e[:, None]
            regular = other.sum(axis=1) == 2  # a face repeating a vertex has fewer edges
            e, f, fe, other = e[regular], f[regular], fe[regular], other[regular]
            wings = fe[other].reshape(-1, 2)
            ff = fv[f]
            # apex: the corner of f that is not an endpoint of e
            not_end = (ff != ev[e, :1]) & (ff != ev[e, 1:])
            apex = ff[np.arange(e.size), np.argmax(not_end, axis=1)]
            for slot in range(2):
                w = wings[:, slot]
                good = self.manifold_edges[w]
                g = np.where(good, self.edge_faces[w].sum(axis=1) - f, 0)
                ge = self.face_edges[g]  # (k, 3)
                has_apex = (ev[ge, 0] == apex[:, None]) | (ev[ge, 1] == apex[:, None])
                pick = has_apex & (ge != w[:, None]) & (ge != e[:, None])
                found = pick.any(axis=1) & good
                cand = ge[np.arange(e.size), np.argmax(pick, axis=1)]
                out[e[found], side, slot] = cand[found]
        return out

    @cached_property
    def used_vertices(self) -> np.ndarray:
        return self.vertex_degree > 0

    @cached_property
    def _corner_walk(self) -> dict[str, np.ndarray] | None:
        """Steps around each vertex, corner to corner (face-major corner index 3 f + k).

        For corner c at vertex v of face (v, a, b): ``next_b`` is v's corner in the other
        face across edge (v, b), ``next_a`` across edge (v, a); ``flip_b`` / ``flip_a`` tell
        whether that edge is traversed the same way by both faces (orientation flips).
        None unless every edge has exactly two faces.
        """
        if not self.is_edge_manifold:
            return None
        f = self.faces.astype(np.int64)
        m = f.shape[0]
        c = np.arange(3 * m)
        face = c // 3
        k = c % 3
        v = f[face, k]
        a = f[face, (k + 1) % 3]
        b = f[face, (k + 2) % 3]
        e_va = self.face_edges[face, k]  # edge (v, a)
        e_vb = self.face_edges[face, (k + 2) % 3]  # edge (b, v)

        def other_corner(edge):
            g = self.edge_faces[edge].sum(axis=1) - face
            kk = np.argmax(f[g] == v[:, None], axis=1)
            return 3 * g + kk

        same = self.edge_same_direction
        return {
            "v": v, "a": a, "b": b,
            "next_b": other_corner(e_vb), "next_a": other_corner(e_va),
            "flip_b": same[e_vb], "flip_a": same[e_va],
        }  # fmt: skip

    @cached_property
    def _link_successor(self) -> np.ndarray:
        """(6M,) successor of each (corner, direction) state of the link walk (state 2c + d).

        Direction 0 walks a -> b and continues across edge (v, b); direction 1 walks b -> a
        and continues across edge (v, a).
        """
        w = self._corner_walk
        assert w is not None, "the link walk needs every edge in two faces"
        m = self.n_faces
        c = np.arange(3 * m)
        a, b = w["a"], w["b"]
        nxt0, nxt1 = w["next_b"], w["next_a"]
        d0 = np.where(a[nxt0] == b, 0, 1)
        d1 = np.where(a[nxt1] == a, 0, 1)
        succ = np.empty(6 * m, np.int64)
        succ[2 * c] = 2 * nxt0 + d0
        succ[2 * c + 1] = 2 * nxt1 + d1
        return succ

    def vertex_link_components(self) -> np.ndarray:
        """(V,) int64: number of pieces (circles or arcs) in each vertex's link.

        The link of v has a node for each edge at v and, for each face at v, a link edge
        joining that face's two edges at v. On a 2-manifold it is one circle at an interior
        vertex and one arc at a boundary vertex; two or more pieces make a pinched vertex
        (two cones touching at their tips). Faces repeating a vertex are left out; unused
        vertices have 0. Connected pieces by min-label propagation with pointer jumping.
        """
        f = self.faces.astype(np.int64)
        ok = (f[:, 0] != f[:, 1]) & (f[:, 1] != f[:, 2]) & (f[:, 0] != f[:, 2])
        f, fe = f[ok], self.face_edges[ok]
        ev = self.edges
        v = f.T.ravel()  # corner vertices, slot-major
        ea = fe.T.ravel()  # edge (corner k, corner k+1)
        eb = fe[:, [2, 0, 1]].T.ravel()  # edge (corner k+2, corner k)
        na = 2 * ea + (ev[ea, 0] != v)  # link node: (edge, which end is v)
        nb = 2 * eb + (ev[eb, 0] != v)
        label = component_labels(2 * self.n_edges, na, nb)
        node_vertex = ev.ravel()  # node 2e + s sits at vertex edges[e, s]
        pieces = np.unique(node_vertex * (2 * self.n_edges) + label)
        counts = np.bincount(pieces // (2 * self.n_edges), minlength=self.n_vertices)
        counts[~self.used_vertices] = 0
        return counts

    @cached_property
    def corner_fan_signs(self) -> np.ndarray:
        """(M, 3) float64 of +-1: orients each vertex's fan of faces consistently.

        All ones on a consistently oriented mesh. On a non-orientable mesh, the face normal
        at corner (f, k) times this sign agrees in orientation with its neighbours around the
        vertex (a vertex's fan is a disk, hence orientable).
        """
        m = self.n_faces
        if not np.any(self.edge_same_direction) or self._corner_walk is None:
            return np.ones((m, 3))
        w = self._corner_walk
        succ = self._link_successor
        flip_state = np.empty(6 * m, bool)
        flip_state[0::2] = w["flip_b"]
        flip_state[1::2] = w["flip_a"]
        sign = np.zeros(3 * m, np.int8)
        starts = self.vertex_corner_starts
        ref = self.corner_order[starts[:-1][self.used_vertices]]
        sign[ref] = 1
        state = 2 * ref
        cur = np.ones(ref.size, np.int8)
        for _ in range(int(self.vertex_degree.max())):
            cur = np.where(flip_state[state], -cur, cur).astype(np.int8)
            state = succ[state]
            corner = state // 2
            sign[corner] = np.where(sign[corner] == 0, cur, sign[corner])
        sign[sign == 0] = 1
        return sign.reshape(m, 3).astype(np.float64)

    def face_orientation_signs(self) -> tuple[np.ndarray, np.ndarray, bool]:
        """Flip signs that would orient every component consistently.

        Returns (signs (M,) int8 of +-1, component (M,) int64 face labels, orientable).
        Breadth-first search over manifold edges, vectorised per front.
        """
        m = self.n_faces
        ok = self.manifold_edges
        f1, f2 = self.edge_faces[ok, 0], self.edge_faces[ok, 1]
        flip = self.edge_same_direction[ok]
        src = np.concatenate([f1, f2])
        dst = np.concatenate([f2, f1])
        par = np.concatenate([flip, flip])
        order, starts = _csr(src, m)
        dst, par = dst[order], par[order]
        sign = np.zeros(m, np.int8)
        comp = -np.ones(m, np.int64)
        n_comp = 0
        while True:
            unvisited = np.flatnonzero(sign == 0)
            if unvisited.size == 0:
                break
            seed = int(unvisited[0])
            sign[seed] = 1
            comp[seed] = n_comp
            front = np.array([seed])
            while front.size:
                lens = starts[front + 1] - starts[front]
                idx = np.repeat(starts[front], lens) + (
                    np.arange(lens.sum()) - np.repeat(np.cumsum(lens) - lens, lens)
                )
                from_face = np.repeat(front, lens)
                nb = dst[idx]
                new = sign[nb] == 0
                nb, from_face, p = nb[new], from_face[new], par[idx][new]
                s = np.where(p, -sign[from_face], sign[from_face]).astype(np.int8)
                sign[nb] = s
                comp[nb] = n_comp
                front = np.unique(nb)
            n_comp += 1
        expected = np.where(flip, -1, 1)
        orientable = bool(np.all(sign[f1] * sign[f2] == expected))
        return sign, comp, orientable


@dataclass(frozen=True)
class TopologyReport:
    """Facts about a fixed face array (see :func:`topology_report`)."""

    n_vertices: int
    n_used_vertices: int
    n_edges: int
    n_faces: int
    closed: bool  # no boundary edge
    boundary_edges: int
    nonmanifold_edges: int  # edges in three or more faces
    nonmanifold_vertices: int  # vertices whose link is not one circle or one arc
    degenerate_faces: int  # faces repeating a vertex index
    is_manifold: bool  # closed 2-manifold: every edge in two faces, every link one circle
    consistently_oriented: bool
    orientable: bool
    components: int
    euler_characteristic: int
    genus: int | None  # orientable closed connected surfaces
    crosscap_number: int | None  # non-orientable closed connected surfaces (2 - chi)
    boundary_vertices: int = 0  # manifold vertices on a boundary (their link is one arc)

    def to_dict(self) -> dict:
        return asdict(self)

    @property
    def is_sphere(self) -> bool:
        return (
            self.is_manifold and self.orientable and self.components == 1
            and self.euler_characteristic == 2
        )  # fmt: skip


def topology_report(faces, n_vertices: int | None = None) -> TopologyReport:
    """Closed 2-manifold, orientation, orientability, Euler characteristic, genus, components.

    faces : (M, 3) int array, a list of polygons, or a :class:`MeshTopology`;
    n_vertices : vertex count (defaults to the largest index + 1).
    """
    if isinstance(faces, MeshTopology):
        topo = faces
    else:
        if n_vertices is None:
            n_vertices = int(np.max(as_triangles(faces, 2**31 - 1))) + 1
        topo = MeshTopology(faces, n_vertices)
    f = topo.faces
    degenerate = int(np.sum((f[:, 0] == f[:, 1]) | (f[:, 1] == f[:, 2]) | (f[:, 0] == f[:, 2])))
    boundary = int(np.sum(topo.edge_face_count == 1))
    nonmanifold = int(np.sum(topo.edge_face_count > 2))
    used = topo.used_vertices
    ev = topo.edges
    bad = topo.vertex_link_components() != 1
    bad[ev[topo.edge_face_count > 2].ravel()] = True  # on an edge of three or more faces
    bad[f[(f[:, 0] == f[:, 1]) | (f[:, 1] == f[:, 2]) | (f[:, 0] == f[:, 2])].ravel()] = True
    bad &= used
    on_boundary = np.zeros(topo.n_vertices, bool)
    on_boundary[ev[topo.edge_face_count == 1].ravel()] = True
    bad_vertices = int(np.sum(bad))
    boundary_vertices = int(np.sum(on_boundary & ~bad))
    signs, comp, orientable = topo.face_orientation_signs()
    n_comp = int(comp.max()) + 1 if comp.size else 0
    # consistent: every edge of two faces is traversed both ways, none is in three or more
    consistent = bool(nonmanifold == 0 and not np.any(topo.edge_same_direction))
    n_used = int(np.sum(used))
    chi = n_used - topo.n_edges + topo.n_faces
    manifold = boundary == 0 and nonmanifold == 0 and bad_vertices == 0 and degenerate == 0
    genus = crosscap = None
    if manifold and n_comp == 1:
        if orientable:
            genus = (2 - chi) // 2
        else:
            crosscap = 2 - chi
    return TopologyReport(
        n_vertices=topo.n_vertices,
        n_used_vertices=n_used,
        n_edges=topo.n_edges,
        n_faces=topo.n_faces,
        closed=boundary == 0,
        boundary_edges=boundary,
        nonmanifold_edges=nonmanifold,
        nonmanifold_vertices=bad_vertices,
        degenerate_faces=degenerate,
        is_manifold=manifold,
        consistently_oriented=consistent,
        orientable=orientable and nonmanifold == 0,
        components=n_comp,
        euler_characteristic=int(chi),
        genus=genus,
        crosscap_number=crosscap,
        boundary_vertices=boundary_vertices,
    )
