"""Sampling closed curves made of cubic Bezier pieces, with as many samples as their bends need.

The sample count is chosen from the curve's own geometry, never taken blindly:

1. **Certified fine polygon.** Each piece is halved (de Casteljau) until the control
   vectors of its derivative (``P1 - P0``, ``P2 - P1``, ``P3 - P2``) lie within
   :data:`FINE_CONE` of each other. The derivative of a cubic is a quadratic Bezier curve
   with those control points, so it stays in their convex cone: along such a piece the
   tangent turns by less than FINE_CONE, and the polygon through a few points of each piece
   has the curve's turning number. A piece that never narrows has a cusp (its derivative
   passes through zero): refused, naming the user's segment. Pieces that bulge more than
   :data:`FLATNESS` of the curve's size from their chord are halved as well, for accuracy.
2. **Bend rule.** With N samples equally spaced in arc length (spacing ``h = L / N``),
   the tangent may turn by at most :data:`STEP_TURN` (30 degrees) along any stretch of
   the curve ``h`` long, counting the turning inside segments (corners where two segments
   meet are not bends: a square keeps its corners at any count). The least such N (at
   most :data:`BEND_RULE_CAP`) is found by bisection on the fine polygon.
3. **Faithfulness.** The sampled polygon must keep the fine polygon's turning number and
   have no cusp; otherwise N grows by half until it does (up to MAX_SAMPLES).

A request below the least count is **raised** to it (the caller can tell from the result's
length and reports it); a request above it is kept.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from .sampling import (
    CUSP_TURN,
    MAX_POINTS,
    MAX_SAMPLES,
    ZERO_STEP,
    CurveError,
    _check_samples,
    closed_curve,
    cumulative_length,
    resample_by_arc_length,
    step_vectors,
    turn_angles,
)

#: Widest spread of tangent directions along one fine piece, radians (8 degrees).
FINE_CONE = np.radians(8.0)
#: Pieces whose handles lie farther than this fraction of the curve's size from their chord
#: are halved too (while the piece budget lasts), so gentle arcs of large radius are also
#: followed closely: with FINE_POINTS points per piece the polygon stays within about
#: 1e-6 of the curve's size.
FLATNESS = 1e-4
#: Points taken on each curved fine piece (its chords then span about 1 degree).
FINE_POINTS = 8
#: Most the tangent may turn, inside segments, along one sample spacing (30 degrees).
STEP_TURN = np.radians(30.0)
#: Largest count the bend rule asks for; above it (a bend of tiny radius, such as a
#: barely rounded corner) only the faithfulness rule applies.
BEND_RULE_CAP = 16_384
#: Most halvings of one piece before it is taken to hold a cusp.
MAX_DEPTH = 40


def derivative_cone(ctrl: np.ndarray, tiny: float) -> np.ndarray:
    """Widest angle between the derivative's control vectors of each cubic piece.

    ctrl : (k, 4, 2) float64; tiny : vectors shorter than this are ignored (a handle on
    its knot). Returns (k,) float64 radians in [0, pi]; pi when no vector is left.
    """
    d = np.diff(ctrl, axis=1)  # (k, 3, 2)
    ok = np.linalg.norm(d, axis=2) > tiny
    width = np.zeros(ctrl.shape[0])
    for i, j in ((0, 1), (0, 2), (1, 2)):
        cross = d[:, i, 0] * d[:, j, 1] - d[:, i, 1] * d[:, j, 0]
        dot = (d[:, i] * d[:, j]).sum(axis=1)
        ang = np.abs(np.arctan2(cross, dot))
        width = np.maximum(width, np.where(ok[:, i] & ok[:, j], ang, 0.0))
    width[~ok.any(axis=1)] = np.pi
    return width


def _halves(ctrl: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    p0, p1, p2, p3 = ctrl[:, 0], ctrl[:, 1], ctrl[:, 2], ctrl[:, 3]
    a, b, c = (p0 + p1) / 2, (p1 + p2) / 2, (p2 + p3) / 2
    ab, bc = (a + b) / 2, (b + c) / 2
    m = (ab + bc) / 2
    return np.stack([p0, a, ab, m], axis=1), np.stack([m, bc, c, p3], axis=1)


def _end_tangents(ctrl: np.ndarray, tiny: float) -> tuple[np.ndarray, np.ndarray]:
    """Unit tangent at the start and end of each piece (first / last long control vector)."""
    d = np.diff(ctrl, axis=1)
    ok = np.linalg.norm(d, axis=2) > tiny
    first = d[np.arange(len(d)), np.argmax(ok, axis=1)]
    last = d[np.arange(len(d)), 2 - np.argmax(ok[:, ::-1], axis=1)]
    first = first / np.linalg.norm(first, axis=1, keepdims=True)
    last = last / np.linalg.norm(last, axis=1, keepdims=True)
    return first, last


def flatness(ctrl: np.ndarray) -> np.ndarray:
    """Largest distance of each cubic piece's two handles from its chord.

    ctrl : (k, 4, 2) float64  ->  (k,) float64 (the handles' distance from the start point
    when the chord has no length)
    """
    chord = ctrl[:, 3] - ctrl[:, 0]
    length = np.linalg.norm(chord, axis=1)
    rel = ctrl[:, 1:3] - ctrl[:, None, 0]
    unit = chord / np.where(length > 0, length, 1.0)[:, None]
    off = np.abs(rel[..., 0] * unit[:, None, 1] - rel[..., 1] * unit[:, None, 0])
    off = np.where(length[:, None] > 0, off, np.linalg.norm(rel, axis=2))
    return off.max(axis=1)


def fine_pieces(ctrl: np.ndarray, owner: np.ndarray, tiny: float, flat: float = np.inf):
    """Halve pieces until each one's tangent turns by less than FINE_CONE.

    ctrl : (k, 4, 2) float64; owner : (k,) int64, the user's segment of each piece.
    flat : pieces whose :func:`flatness` is above this are halved too, while the number
    of pieces stays within MAX_POINTS // FINE_POINTS.
    Returns (ctrl (k', 4, 2), owner (k',), wide (k',) bool): ``wide`` marks pieces still
    wider than FINE_CONE after MAX_DEPTH halvings (they hold a cusp).
    """
    limit = MAX_POINTS // FINE_POINTS
    for _ in range(MAX_DEPTH):
        split = derivative_cone(ctrl, tiny) > FINE_CONE
        if split.any() and ctrl.shape[0] + int(split.sum()) > limit:
            raise CurveError(
                f"the curve needs more than {limit} pieces to follow its bends; simplify it"
            )
        bulge = ~split & (flatness(ctrl) > flat)
        if ctrl.shape[0] + int(split.sum()) + int(bulge.sum()) <= limit:
            split |= bulge
        if not split.any():
            break
        left, right = _halves(ctrl[split])
        pos = np.arange(ctrl.shape[0]) + np.concatenate([[0], np.cumsum(split)[:-1]])
        out = np.empty((ctrl.shape[0] + int(split.sum()), 4, 2))
        own = np.empty(out.shape[0], owner.dtype)
        out[pos] = ctrl
        own[pos] = owner
        out[pos[split]] = left
        out[pos[split] + 1] = right
        own[pos[split] + 1] = owner[split]
        ctrl, owner = out, own
    return ctrl, owner, derivative_cone(ctrl, tiny) > FINE_CONE


def _window_turning(s: np.ndarray, bend: np.ndarray, h: float) -> float:
    """Largest sum of ``bend`` over the points of any stretch ``h`` long of a closed polygon.

    s : (n + 1,) cumulative length (s[0] = 0, s[n] = L); bend : (n,) turning at point k.
    """
    n, total = bend.size, s[-1]
    s2 = np.concatenate([s[:-1], s[:-1] + total])
    c2 = np.concatenate([[0.0], np.cumsum(np.concatenate([bend, bend]))])
    end = np.searchsorted(s2, s[:-1] + h, side="right")
    end = np.minimum(end, np.arange(n) + n)
    return float((c2[end] - c2[np.arange(n)]).max())


def least_samples_for_bends(s: np.ndarray, bend: np.ndarray, requested: int) -> int:
    """The least N >= requested (at most BEND_RULE_CAP) meeting the bend rule (see module)."""
    total = s[-1]

    def fits(n: int) -> bool:
        return _window_turning(s, bend, total / n) <= STEP_TURN

    if fits(requested):
        return requested
    lo, hi = requested, max(requested, BEND_RULE_CAP)
    if not fits(hi):
        return hi
    while hi - lo > 1:
        mid = (lo + hi) // 2
        lo, hi = (lo, mid) if fits(mid) else (mid, hi)
    return hi


def sample_pieces(
    ctrl,
    owner=None,
    *,
    samples: int = 1024,
    name: str = "curve",
    describe: Callable[[int], str] | None = None,
) -> np.ndarray:
    """Points equally spaced in arc length on a closed curve of cubic pieces.

    ctrl : (k, 4, 2) float64 control points; piece i must end where piece i+1 starts and
        the last piece where the first starts (gaps up to 1e-6 of the curve's size are
        closed by moving the next piece's start).
    owner : (k,) int, the user's segment each piece belongs to (default: each its own);
        ``describe(owner)`` names it in messages (default ``"segment <owner>"``).
    samples : the count asked for; raised to the least the curve's bends need (see the
        module), never lowered.
    Returns (N, 2) float64 with N >= samples.
    """
    samples = _check_samples(samples)
    ctrl = np.array(ctrl, dtype=np.float64)
    k = ctrl.shape[0] if ctrl.ndim else 0
    if ctrl.ndim != 3 or ctrl.shape[1:] != (4, 2) or not 1 <= k <= MAX_POINTS:
        raise CurveError(f"{name}: expected (k, 4, 2) control points, got shape {ctrl.shape}")
    if not np.all(np.isfinite(ctrl)):
        raise CurveError(f"{name}: a control point is not finite")
    owner = np.arange(k) if owner is None else np.asarray(owner, np.int64)
    describe = describe or (lambda o: f"segment {o}")
    size = max(float(np.ptp(ctrl.reshape(-1, 2), axis=0).max()), 1e-300)
    tiny = 1e-12 * size
    hull = np.linalg.norm(np.diff(ctrl, axis=1), axis=2).sum(axis=1)
    solid = hull > ZERO_STEP * hull.sum()  # pieces that are points draw nothing
    if not solid.any():
        raise CurveError(f"{name}: the curve has no length (all its points coincide)")
    ctrl, owner = ctrl[solid], owner[solid]
    # close gaps left by rounding, keeping each piece's start tangent
    gap = np.roll(ctrl[:, 3], 1, axis=0) - ctrl[:, 0]
    wide_gap = np.flatnonzero(np.linalg.norm(gap, axis=1) > 1e-6 * size)
    if wide_gap.size:
        j = int(wide_gap[0])
        raise CurveError(
            f"{name}: {describe(int(owner[j - 1]))} ends {np.linalg.norm(gap[j]):.6g} away from "
            f"where {describe(int(owner[j]))} starts; the pieces must join"
        )
    ctrl[:, :2] += gap[:, None, :]
    ctrl, owner, wide = fine_pieces(ctrl, owner, tiny, FLATNESS * size)
    first, last = _end_tangents(ctrl, tiny)
    prev_last = np.roll(last, 1, axis=0)
    corner = np.arctan2(
        prev_last[:, 0] * first[:, 1] - prev_last[:, 1] * first[:, 0],
        (prev_last * first).sum(axis=1),
    )
    sharp = np.flatnonzero(np.abs(corner) > CUSP_TURN)
    if sharp.size:
        j = int(sharp[0])
        a, b = int(owner[j - 1]), int(owner[j])
        if a == b:
            wide[j] = True
    if wide.any():
        o = int(owner[np.flatnonzero(wide)[0]])
        raise CurveError(
            f"{name}: {describe(o)} has a cusp (its direction reverses inside the segment); "
            "a regular curve never reverses"
        )
    if sharp.size:
        raise CurveError(
            f"{name}: cusp where {describe(a)} meets {describe(b)}: the direction turns back "
            f"by {np.degrees(abs(corner[j])):.1f} degrees (at most "
            f"{np.degrees(CUSP_TURN):.0f} are allowed); a regular curve never reverses"
        )
    straight = derivative_cone(ctrl, tiny) <= 1e-9
    # straight pieces: their start (and middle, for a triangle); curved ones: FINE_POINTS
    count = np.where(straight, 2 if ctrl.shape[0] < 4 else 1, FINE_POINTS)
    first_point = np.concatenate([[0], np.cumsum(count)[:-1]])
    dense = np.empty((int(count.sum()), 2))
    dense[first_point[straight]] = ctrl[straight, 0]
    if ctrl.shape[0] < 4:
        dense[first_point[straight] + 1] = (ctrl[straight, 0] + ctrl[straight, 3]) / 2
    t = np.arange(FINE_POINTS) / FINE_POINTS
    u = 1.0 - t
    basis = np.stack([u**3, 3 * u * u * t, 3 * u * t * t, t**3], axis=1)
    at = first_point[~straight][:, None] + np.arange(FINE_POINTS)
    dense[at] = np.einsum("mj,kjd->kmd", basis, ctrl[~straight])
    new_segment = owner != np.roll(owner, 1)
    new_segment[0] = True  # where the curve closes, even when one segment makes it all
    is_corner = np.zeros(dense.shape[0], bool)
    is_corner[first_point] = new_segment
    steps = np.linalg.norm(step_vectors(dense), axis=1)
    kept = np.flatnonzero(steps > ZERO_STEP * steps.sum())
    if kept.size < 4:
        raise CurveError(f"{name}: the curve has no length (all its points coincide)")
    # a point dropped for repeating the next one hands its corner flag on to that one
    flags = np.zeros(kept.size, bool)
    np.logical_or.at(flags, np.searchsorted(kept, np.arange(dense.shape[0])) % kept.size, is_corner)
    dense = closed_curve(dense[kept], name=name, drop_repeated_end=False)
    bend = np.where(flags, 0.0, np.abs(turn_angles(dense)))
    s = cumulative_length(dense)
    want = int(np.rint(turn_angles(dense).sum() / (2 * np.pi)))
    n = least_samples_for_bends(s, bend, samples)
    while True:
        pts = resample_by_arc_length(dense, n)
        turns = turn_angles(pts)
        if int(np.rint(turns.sum() / (2 * np.pi))) == want and np.abs(turns).max() <= CUSP_TURN:
            return pts
        if n >= MAX_SAMPLES:
            raise CurveError(
                f"{name}: {MAX_SAMPLES} samples do not follow the curve (it has loops or "
                f"bends smaller than 1/{MAX_SAMPLES} of its length); simplify it"
            )
        n = min(MAX_SAMPLES, int(np.ceil(n * 1.5)))
