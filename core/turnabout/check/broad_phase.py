"""Broad phase of the self-intersection search: pairs of triangle boxes that overlap.

Triangle bounding boxes are hashed into a uniform grid (pure numpy); each pair is kept only
in the cell holding the low corner of the two boxes' overlap, so no pair is seen twice.
Inside each cell the boxes are sorted by their low x and only those whose x ranges overlap
are paired (a sweep by binary search), so a crowded cell costs its overlapping pairs, not
all its pairs.

The grid's entries can be cut into parts by ranges of cells (``GridEntries.parts``). Each
part's pairs are the very pairs, in the very order, that the whole grid lists for those
cells, so parts can be worked on different threads (numpy releases the interpreter lock in
its sorts, gathers and arithmetic) and their results joined in part order: the outcome does
not depend on how many threads there were.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

_TINY = np.finfo(np.float64).tiny
SWEEP_BITS = 20  # quantisation of x inside a grid cell for the sweep
ONE_KEY_CELLS = 2.0 ** (62 - SWEEP_BITS)  # grids with fewer cells sort on one int64 key
PART_BUCKETS = 4096  # resolution of the cell ranges that balance the parts


def expand_ranges(counts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(owner, local) for ``counts[i]`` consecutive items per owner i."""
    owner = np.repeat(np.arange(counts.size), counts)
    local = np.arange(owner.size) - np.repeat(np.cumsum(counts) - counts, counts)
    return owner, local


@dataclass
class GridEntries:
    """One entry per (box, grid cell it covers), in box order.

    key : (N,) int64 the cell; tri : (N,) int32 the box; mask : (N,) uint8 bit k set where
    the box starts in the entry's cell on axis k; q_lo, q_hi : (M,) int64 each box's x range
    quantised by a monotone floor; lo32, hi32 : (M, 3) float32 the boxes, widened by one
    float32 step so rounding cannot lose a touching pair; one_key : cell and x fit in one
    int64 sort key.
    """

    key: np.ndarray
    tri: np.ndarray
    mask: np.ndarray
    q_lo: np.ndarray
    q_hi: np.ndarray
    lo32: np.ndarray
    hi32: np.ndarray
    one_key: bool

    def parts(self, n: int) -> list[np.ndarray]:
        """The entries cut into at most n parts of whole, consecutive cell ranges with about
        equal entry counts: a list of (n_i,) int64 entry indices, each in entry order."""
        if n <= 1 or self.key.size == 0:
            return [np.arange(self.key.size)]
        top = int(self.key.max()) + 1
        width = max(1, -(-top // PART_BUCKETS))
        hist = np.bincount(self.key // width, minlength=-(-top // width))
        cum = np.cumsum(hist)
        cut = np.unique(np.searchsorted(cum, cum[-1] * np.arange(1, n) / n, side="right"))
        part = np.searchsorted(cut * width, self.key, side="right")
        order = np.argsort(part, kind="stable")
        bounds = np.searchsorted(part[order], np.arange(cut.size + 2))
        return [order[i:j] for i, j in zip(bounds[:-1], bounds[1:], strict=True) if j > i]


def grid_entries(lo: np.ndarray, hi: np.ndarray, cell_scale: float = 1.5) -> GridEntries:
    """The grid's entries for boxes lo, hi (M, 3) float, cells ``cell_scale`` times the mean
    box extent."""
    ext = hi - lo
    ext = np.maximum(np.maximum(ext[:, 0], ext[:, 1]), ext[:, 2])
    h = float(cell_scale * max(ext.mean(), _TINY))
    origin = lo.min(axis=0)
    imin = np.floor((lo - origin) / h).astype(np.int64)
    imax = np.floor((hi - origin) / h).astype(np.int64)
    dims = imax.max(axis=0) + 1
    span = imax - imin + 1
    counts = span[:, 0] * span[:, 1] * span[:, 2]
    tri, local = expand_ranges(counts)
    sx, sy = span[tri, 0], span[tri, 1]
    cx = imin[tri, 0] + local % sx
    cy = imin[tri, 1] + (local // sx) % sy
    cz = imin[tri, 2] + local // (sx * sy)
    key = (cx * dims[1] + cy) * dims[2] + cz
    # a pair belongs to the first cell both boxes cover (the max of their low cells on every
    # axis): in that cell, on each axis, at least one of the two starts there. Bit k of an
    # entry's mask says its box starts in the entry's cell on axis k.
    mask = (cx == imin[tri, 0]).astype(np.uint8)
    mask |= (cy == imin[tri, 1]).astype(np.uint8) << 1
    mask |= (cz == imin[tri, 2]).astype(np.uint8) << 2
    del cx, cy, cz, sx, sy, local
    lo32 = np.nextafter(lo.astype(np.float32), np.float32(-np.inf))
    hi32 = np.nextafter(hi.astype(np.float32), np.float32(np.inf))
    # sweep key: the cell, then the low x quantised by a monotone floor, so one sort orders
    # entries by cell and then (up to ties in the quantum) by x; a binary search per entry
    # finds the last partner in its cell whose quantised low x is not beyond its own
    # quantised high x (never too few: the floor keeps the order)
    x_lo = lo32[:, 0].astype(np.float64)
    x_hi = hi32[:, 0].astype(np.float64)
    x0 = float(x_lo.min())
    levels = float(2**SWEEP_BITS - 1)
    scale = levels / max(float(x_hi.max()) - x0, _TINY)
    q_lo = np.minimum(np.floor((x_lo - x0) * scale), levels).astype(np.int64)
    q_hi = np.minimum(np.floor((x_hi - x0) * scale), levels).astype(np.int64)
    return GridEntries(key, tri.astype(np.int32), mask, q_lo, q_hi, lo32, hi32,
                       float(dims.prod()) < ONE_KEY_CELLS)  # fmt: skip


def entry_pairs(g: GridEntries, sel: np.ndarray | None = None):
    """Pairs (i, j), i < j, of overlapping boxes among the entries ``sel`` (whole cells, in
    entry order; all when None), in the grid's order. Returns two (K,) int64."""
    key, tri, mask = (g.key, g.tri, g.mask) if sel is None else (
        g.key[sel], g.tri[sel], g.mask[sel])  # fmt: skip
    if g.one_key:
        sweep = (key << SWEEP_BITS) | g.q_lo.take(tri)
        order = np.argsort(sweep, kind="stable")
        sweep, tri, mask = sweep[order], tri[order], mask[order]
        query = ((sweep >> SWEEP_BITS) << SWEEP_BITS) | g.q_hi.take(tri)
    else:  # a grid too large for one key: sort by cell, then by x, in two keys
        order = np.lexsort((g.q_lo.take(tri), key))
        key, tri, mask = key[order], tri[order], mask[order]
        new = np.ones(key.size, bool)
        new[1:] = key[1:] != key[:-1]
        rank = np.cumsum(new) - 1
        sweep = rank * (2**SWEEP_BITS) + g.q_lo.take(tri)
        query = rank * (2**SWEEP_BITS) + g.q_hi.take(tri)
    n = tri.size
    del order, key
    stop = np.searchsorted(sweep, query, side="right")
    del sweep, query
    # every entry against the later entries of its cell up to its last x partner, as
    # (first, second) entry positions (int32 while they fit: half the memory traffic)
    counts = np.maximum(stop - np.arange(n) - 1, 0)
    total = int(counts.sum())
    it = np.int32 if max(total, n) < 2**31 else np.int64
    first = np.repeat(np.arange(n, dtype=it), counts)
    second = np.repeat((np.arange(n) + 1 - (np.cumsum(counts) - counts)).astype(it), counts)
    second += np.arange(total, dtype=it)
    del counts, stop
    home = (mask.take(first) | mask.take(second)) == 7
    first, second = first[home], second[home]
    del home
    # the boxes' other axes, from values laid out in entry order (neighbouring entries are
    # neighbours in memory); x last: the sweep only missed pairs tied after rounding
    for ax in (1, 2, 0):
        lo_e = g.lo32[:, ax].take(tri)
        hi_e = g.hi32[:, ax].take(tri)
        ok = lo_e.take(first) <= hi_e.take(second)
        ok &= lo_e.take(second) <= hi_e.take(first)
        first, second = first[ok], second[ok]
    a, b = tri.take(first).astype(np.int64), tri.take(second).astype(np.int64)
    swap = a > b
    return np.where(swap, b, a), np.where(swap, a, b)


def grid_candidate_pairs(
    lo: np.ndarray, hi: np.ndarray, cell_scale: float = 1.5
) -> tuple[np.ndarray, np.ndarray]:
    """Pairs (i, j), i < j, of boxes that overlap: lo, hi (M, 3) float box corners.

    A uniform grid with cells ``cell_scale`` times the mean box extent (see the module
    notes); each pair is reported once. Boxes are compared in float32, widened by one
    float32 step so rounding cannot lose a touching pair. Returns two (K,) int64 arrays.
    """
    lo = np.asarray(lo, np.float64)
    hi = np.asarray(hi, np.float64)
    if lo.shape[0] < 2:
        return np.zeros(0, np.int64), np.zeros(0, np.int64)
    return entry_pairs(grid_entries(lo, hi, cell_scale))
