"""Double curves from their segments: segments that share an event chain into polylines.

Every segment of a double curve has two ends, each an "event" (an edge of one triangle
piercing another) with an integer key; two segments meet where they share a key. A key seen
exactly twice links two ends; a key seen once is a free end (where the surface folds onto
itself, or a degenerate pair). Every segment has two ends, so the links form disjoint paths
and cycles: the double curves.

The order is fixed: curves in order of their lowest segment; a curve starts at that segment,
goes on through the segment linked to its first end, and a path then gets, before the start,
the part reached through its second end, reversed. Computed without a loop over segments:
an end's successor along a walk is the other end of the segment it links to, so walks are
lists over the 2S ends, ranked by pointer doubling (log S rounds of numpy).
"""

from __future__ import annotations

import numpy as np


def _partners(seg_keys: np.ndarray) -> np.ndarray:
    """The end linked to each end (2S,) int64 (end 2i + k is end k of segment i), -1 for a
    key not seen exactly twice."""
    flat = seg_keys.ravel()
    order = np.argsort(flat, kind="stable")
    sk = flat[order]
    partner = -np.ones(flat.size, np.int64)
    same = np.flatnonzero(sk[1:] == sk[:-1])
    if same.size:  # only keys that appear exactly twice
        ok = ~np.isin(same - 1, same) & ~np.isin(same + 1, same)
        same = same[ok]
    e1, e2 = order[same], order[same + 1]
    partner[e1] = e2
    partner[e2] = e1
    return partner


def _rank(pred: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """For each node of disjoint lists given by predecessors (-1 at a head): its head and
    its distance from it, by pointer doubling."""
    n = pred.size
    head = np.where(pred < 0, np.arange(n), pred)
    dist = (pred >= 0).astype(np.int64)
    while True:
        nxt = head[head]
        done = nxt == head
        if done.all():
            return head, dist
        dist = np.where(done, dist, dist + dist[head])
        head = nxt


def _lowest_segment(succ: np.ndarray) -> np.ndarray:
    """The lowest segment on each curve (S,) int64, from the ends' successors (2S,) (-1 at a
    free end): the minimum over the ends reachable from an end, by doubling the reach each
    round; a segment's two ends walk its curve in the two directions, so together they see
    all of it (a cycle is seen from either)."""
    n = succ.size
    nxt = np.where(succ >= 0, succ, np.arange(n))
    low = np.arange(n) // 2
    for _ in range(max(1, int(np.ceil(np.log2(n))) + 1)):
        low = np.minimum(low, low[nxt])
        nxt = nxt[nxt]
    return np.minimum(low[0::2], low[1::2])


def chain_segments(seg_keys: np.ndarray) -> tuple[list[np.ndarray], list[bool]]:
    """Chain segments (S, 2) int event keys: (curves as (k,) int64 ordered segment ids, one
    closed flag per curve), in the order the module notes describe."""
    s = seg_keys.shape[0]
    if s == 0:
        return [], []
    partner = _partners(seg_keys)
    linked = (partner.reshape(s, 2) >= 0).all(axis=1)  # a neighbour at both ends
    seg = np.arange(s)
    succ = np.where(partner >= 0, partner ^ 1, -1)
    label = _lowest_segment(succ)  # each curve's start
    is_cycle = (np.bincount(label, ~linked, minlength=s) == 0)[label]
    # an end's successor on a walk: leave segment i by end k, arrive at the linked end, leave
    # that segment by its other end. Walks start at the start's ends: end 0 (forward) and end
    # 1 (backward, a path only: on a cycle the forward walk sees everything)
    start_end = 2 * label  # forward start end of each segment's curve
    cut = succ == np.repeat(start_end, 2)  # a cycle's walk stops before its start again
    cut |= succ == np.repeat(start_end + 1, 2)  # ... and a walk never enters a start
    succ = np.where(cut, -1, succ)
    pred = -np.ones(2 * s, np.int64)
    has = succ >= 0
    pred[succ[has]] = np.flatnonzero(has)
    head, dist = _rank(pred)
    # each segment other than a start is reached by exactly one walk from its curve's start,
    # through the end it leaves by: find, for each segment, which of its two ends lies on a
    # walk headed by its curve's start end 0 (forward) or end 1 (backward)
    pos = np.zeros(s, np.int64)
    side = np.zeros(s, np.int64)  # 0 the start, 1 forward, -1 backward
    for k in (0, 1):
        e = 2 * seg + k
        fwd = (head[e] == start_end) & (seg != label)
        bwd = (head[e] == start_end + 1) & (seg != label) & ~is_cycle
        side = np.where(fwd, 1, np.where(bwd, -1, side))
        pos = np.where(fwd | bwd, dist[e], pos)
    # curve order: by start; inside a curve, backward ends reversed, the start, forward ends
    key = side * (2 * s + 1) + np.where(side < 0, s - pos, pos)
    order = np.lexsort((key, label))
    counts = np.bincount(label, minlength=s)
    starts = np.flatnonzero(counts)
    curves = np.split(order, np.cumsum(counts[starts])[:-1])
    closed = [bool(c.size > 2 and is_cycle[c[0]]) for c in curves]
    return curves, closed
