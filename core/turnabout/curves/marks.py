"""Marked points: where the tangent points in a chosen direction, frame by frame.

These are the points the direction count of :mod:`.turning` counts: +1 where the curve
turns left through the direction, -1 where it turns right. Their signed count is the
turning number, so during a regular homotopy it never changes; marks can only appear or
vanish in pairs of opposite sign (where an inflection pair is born or dies with its
tangent along the direction). :func:`track_marks` links marks from frame to frame so an
animation can follow each one and show the pairs.

The position of a mark at point k is where the tangent has exactly the chosen direction
on the corner-cut curve through the step midpoints (the quadratic Bezier with control
points midpoint of step k-1, point k, midpoint of step k), so marks move smoothly.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .sampling import step_vectors
from .turning import direction_passages


@dataclass(frozen=True)
class FrameMarks:
    """The marked points of every frame, as flat arrays ordered by frame then point.

    frame : (M,) int64, the frame of each mark
    point : (M,) int64, the point of the curve where the tangent passes the direction
    along : (M,) float64, position along the curve in [0, 1) (point plus fraction, / N)
    positions : (M, 2) float64
    signs : (M,) int8, +1 turning left, -1 turning right
    counts : (F,) int64, marks per frame
    signed_counts : (F,) int64, sum of the signs per frame (the turning number)
    direction : radians from +x
    """

    frame: np.ndarray
    point: np.ndarray
    along: np.ndarray
    positions: np.ndarray
    signs: np.ndarray
    counts: np.ndarray
    signed_counts: np.ndarray
    direction: float

    def of_frame(self, f: int) -> tuple[np.ndarray, np.ndarray]:
        """(positions (m, 2), signs (m,)) of frame ``f``."""
        sel = self.frame == f
        return self.positions[sel], self.signs[sel]


def marks_per_frame(frames: np.ndarray, direction: float = 0.0) -> FrameMarks:
    """Marked points of each frame of a closed-curve animation.

    frames : (F, N, 2) float, or (N, 2) for one curve (then F = 1)
    direction : radians, counter-clockwise from +x
    """
    p = np.asarray(frames, dtype=np.float64)
    if p.ndim == 2:
        p = p[None]
    if p.ndim != 3 or p.shape[2] != 2:
        raise ValueError(f"frames: expected (F, N, 2) or (N, 2), got {p.shape}")
    nf, n = p.shape[:2]
    sign, _ = direction_passages(p, direction)
    f_idx, k = np.nonzero(sign)
    d = step_vectors(p)
    a = d[f_idx, (k - 1) % n]  # step arriving at point k
    b = d[f_idx, k]  # step leaving it
    e = np.array([np.cos(direction), np.sin(direction)])
    ca = a[:, 0] * e[1] - a[:, 1] * e[0]
    cb = b[:, 0] * e[1] - b[:, 1] * e[0]
    den = ca - cb
    t = np.where(den != 0.0, ca / np.where(den != 0.0, den, 1.0), 0.5)
    t = np.clip(t, 0.0, 1.0)[:, None]
    corner = p[f_idx, k]
    m0 = corner - 0.5 * a
    m1 = corner + 0.5 * b
    pos = (1 - t) ** 2 * m0 + 2 * t * (1 - t) * corner + t**2 * m1
    along = ((k - 0.5 + t[:, 0]) / n) % 1.0
    s = sign[f_idx, k].astype(np.int8)
    counts = np.bincount(f_idx, minlength=nf).astype(np.int64)
    signed = np.bincount(f_idx, weights=s, minlength=nf).astype(np.int64)
    return FrameMarks(
        frame=f_idx.astype(np.int64),
        point=k.astype(np.int64),
        along=along,
        positions=pos,
        signs=s,
        counts=counts,
        signed_counts=signed,
        direction=float(direction),
    )


def track_marks(marks: FrameMarks, max_jump: float = 0.05) -> np.ndarray:
    """Link marks across consecutive frames; returns a track id per mark, (M,) int64.

    A mark continues the track of the nearest mark of the same sign in the previous frame
    (distance measured along the curve, as a fraction of its length, at most ``max_jump``),
    closest pairs first; any other mark starts a new track. A track that starts after the
    first frame is a mark appearing; one that ends before the last frame, a mark vanishing.
    """
    ids = np.full(marks.frame.shape[0], -1, dtype=np.int64)
    starts = np.concatenate([[0], np.cumsum(marks.counts)])
    next_id = 0
    prev = np.zeros(0, dtype=np.int64)
    for f in range(marks.counts.shape[0]):  # loop over frames; marks per frame are few
        cur = np.arange(starts[f], starts[f + 1])
        if prev.size and cur.size:
            dist = np.abs(marks.along[cur][:, None] - marks.along[prev][None, :])
            dist = np.minimum(dist, 1.0 - dist)
            dist[marks.signs[cur][:, None] != marks.signs[prev][None, :]] = np.inf
            order = np.argsort(dist, axis=None, kind="stable")
            used_c = np.zeros(cur.size, bool)
            used_p = np.zeros(prev.size, bool)
            for flat in order:
                i, j = divmod(int(flat), prev.size)
                if dist[i, j] > max_jump:
                    break
                if not used_c[i] and not used_p[j]:
                    used_c[i] = used_p[j] = True
                    ids[cur[i]] = ids[prev[j]]
        fresh = cur[ids[cur] < 0]
        ids[fresh] = next_id + np.arange(fresh.size)
        next_id += fresh.size
        prev = cur
    return ids


def mark_events(marks: FrameMarks, ids: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Frames where marks appear and vanish.

    Returns (appear (T,) int64, vanish (T,) int64) for each track id 0..T-1: the first frame
    the track is present, and the first frame after it is gone (F if it lasts to the end).
    """
    t = int(ids.max()) + 1 if ids.size else 0
    nf = marks.counts.shape[0]
    appear = np.full(t, nf, dtype=np.int64)
    last = np.full(t, -1, dtype=np.int64)
    np.minimum.at(appear, ids, marks.frame)
    np.maximum.at(last, ids, marks.frame)
    return appear, last + 1
