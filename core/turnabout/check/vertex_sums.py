"""Per-vertex sums and minima over the corners of a fixed mesh, as gathers.

Every per-vertex quantity of the local metrics (vertex normals, the cotangent Laplacian, the
mixed Voronoi areas, the angle sums, the mean edge lengths, the fold minimum) is a sum or a
minimum of values at the corners of the faces around the vertex. ``np.bincount`` scatters
them; :class:`CornerSums` instead lays each vertex's corners out once as a column of a
(W, V) index table (W: a width that most vertices' degrees fit in), so that every frame is
one gather of contiguous rows and W - 1 additions of (V,) rows. A vertex's corners are
added in the order ``np.bincount(topo.corner_index_slot_major, values)`` adds them (all
slot-0 corners by face, then slot 1, then slot 2), starting from 0.0, so the sums are
bit-identical to it; the few vertices of a larger degree are summed by a bincount of their
own corners.
"""

from __future__ import annotations

import numpy as np

from .topology import MeshTopology

# cost of one corner summed by bincount, in gathered table cells (measured: a scatter-add
# costs about twice a gather)
_BINCOUNT_COST = 2.0
_MAX_WIDTH = 64


def _table_width(degree: np.ndarray, n_columns: int) -> int:
    """The width W that minimises W V gathered cells + the bincount cost of the corners of
    vertices of a larger degree."""
    counts = np.bincount(degree)
    d = np.arange(counts.size)
    corners_above = np.cumsum((d * counts)[::-1])[::-1]  # corners at degree >= d
    widths = np.arange(1, min(counts.size, _MAX_WIDTH + 1))
    if widths.size == 0:
        return 1
    above = np.append(corners_above, 0)[widths + 1]  # corners at degree > w
    cost = widths * n_columns + _BINCOUNT_COST * above
    return int(widths[np.argmin(cost)])


class CornerSums:
    """Index tables for per-vertex sums and minima over corners of one topology.

    Corner values are (3M,) float64 in slot-major order (corner k of face f at k M + f);
    face values are (M,) float64, each counted once per corner of its face. The ``values``
    arrays handed to the sums carry one more entry, 0.0, at the end (index 3M or M): the
    table's padding points there. Instances hold no per-frame state (safe to share).

    width : W; columns : (V,) table columns are vertices, rows their corners.
    """

    def __init__(self, topo: MeshTopology):
        n, m = topo.n_vertices, topo.n_faces
        starts = topo.vertex_corner_starts
        order = topo.slot_major_corner_order  # per vertex in increasing slot-major index
        degree = np.diff(starts)
        self.n_vertices, self.n_faces = n, m
        w = _table_width(degree, n)
        self.width = w
        low = degree <= w
        table = np.full((w, n), 3 * m, np.intp)  # padding: the 0.0 after the corner values
        low_min = np.zeros((w, n), np.intp)
        first = starts[:-1]
        used = degree > 0
        for j in range(w):
            has = low & (degree > j)
            table[j, has] = order[first[has] + j]
            # minima pad with the vertex's own first corner (the larger degrees and unused
            # vertices are overwritten after the reduction)
            pick = np.where(has, first + j, first)
            low_min[j, used] = order[pick[used]]
        high = np.flatnonzero(~low)
        self.table = table
        self.face_table = np.where(table == 3 * m, m, table % max(m, 1)).astype(np.intp)
        self.min_table = low_min
        self.unused = np.flatnonzero(~used)
        self.high_vertices = high
        hd = degree[high]
        self.high_starts = np.zeros(high.size, np.intp)
        if high.size:
            np.cumsum(hd[:-1], out=self.high_starts[1:])
        pos = np.repeat(first[high] - self.high_starts, hd) + np.arange(int(hd.sum()))
        self.high_corners = order[pos].astype(np.intp)
        self.high_faces = self.high_corners % max(m, 1)
        self.high_ids = np.repeat(np.arange(high.size), hd)

    def rows_buffer(self) -> np.ndarray:
        """An empty (W, V) float64 buffer for the gathered rows (reusable across sums)."""
        return np.empty(self.table.shape)

    def _sum(self, values: np.ndarray, table: np.ndarray, high_index: np.ndarray,
             out: np.ndarray | None, rows: np.ndarray | None) -> np.ndarray:  # fmt: skip
        n = self.n_vertices
        out = np.empty(n) if out is None else out
        rows = np.empty(table.shape) if rows is None else rows
        values.take(table, out=rows, mode="clip")
        np.add(rows[0], 0.0, out=out)  # bincount starts from +0.0 (turns -0.0 into 0.0)
        for j in range(1, rows.shape[0]):
            out += rows[j]
        if self.high_vertices.size:
            hv = values.take(high_index, mode="clip")
            out[self.high_vertices] = np.bincount(self.high_ids, hv, self.high_vertices.size)
        return out

    def sum_corners(self, values: np.ndarray, out: np.ndarray | None = None,
                    rows: np.ndarray | None = None) -> np.ndarray:  # fmt: skip
        """(V,) float64: per vertex, the sum of its corners' values.

        values : (3M + 1,) float64, slot-major corner values then 0.0. Equal bit for bit to
        ``np.bincount(topo.corner_index_slot_major, values[:-1], minlength=V)``. out : (V,)
        and rows : (W, V) float64 buffers to reuse (optional).
        """
        return self._sum(values, self.table, self.high_corners, out, rows)

    def sum_faces(self, values: np.ndarray, out: np.ndarray | None = None,
                  rows: np.ndarray | None = None) -> np.ndarray:  # fmt: skip
        """(V,) float64: per vertex, the sum of the values of its faces, once per corner.

        values : (M + 1,) float64, face values then 0.0. Equal bit for bit to
        ``np.bincount(topo.corner_index_slot_major, np.tile(values[:-1], 3), minlength=V)``.
        """
        return self._sum(values, self.face_table, self.high_faces, out, rows)

    def min_corners(self, values: np.ndarray, unused: float = 1.0, out: np.ndarray | None = None,
                    rows: np.ndarray | None = None) -> np.ndarray:  # fmt: skip
        """(V,) float64: per vertex, the least of its corners' values (``unused`` where a
        vertex has no corner). values : (3M,) or (3M + 1,) float64, slot-major."""
        rows = np.empty(self.min_table.shape) if rows is None else rows
        values.take(self.min_table, out=rows, mode="clip")
        out = np.minimum.reduce(rows, axis=0, out=out)
        if self.high_vertices.size:
            hv = values.take(self.high_corners, mode="clip")
            out[self.high_vertices] = np.minimum.reduceat(hv, self.high_starts)
        if self.unused.size:
            out[self.unused] = unused
        return out
