"""Closed plane curves as point arrays: validation, arc length, resampling, spline input.

A closed curve is a ``(N, 2) float64`` array of points in order; the step from the last
point back to the first closes it (the first point is not repeated). Step ``k`` runs from
point ``k`` to point ``(k + 1) % N``.

Every array a user hands in is untrusted: :func:`closed_curve` checks the shape, the size,
that every coordinate is finite, that no step has zero length and that no step reverses the
previous one (a cusp), and raises :class:`CurveError` naming what was wrong.
"""

from __future__ import annotations

import numpy as np

#: Fewest points a closed curve may have.
MIN_POINTS = 4
#: Most points a curve handed in may have (about 16 MB as float64).
MAX_POINTS = 1_000_000
#: Most points a resampled curve may have.
MAX_SAMPLES = 200_000
#: Most Bezier segments one spline may have.
MAX_SEGMENTS = 100_000
#: A turn at one point sharper than this (radians, about 162 degrees) is taken as a cusp.
CUSP_TURN = 0.9 * np.pi
#: Steps shorter than this fraction of the whole length count as zero-length.
ZERO_STEP = 1e-9


class CurveError(ValueError):
    """A curve handed in is not a closed regular plane curve we can work with.

    The message says what was wrong and what is allowed.
    """


def _as_points(points, name: str) -> np.ndarray:
    try:
        arr = np.asarray(points)
    except (TypeError, ValueError) as exc:
        raise CurveError(f"{name}: not an array of numbers ({exc})") from None
    if arr.dtype == object or not (
        np.issubdtype(arr.dtype, np.floating) or np.issubdtype(arr.dtype, np.integer)
    ):
        raise CurveError(f"{name}: expected real numbers, got dtype {arr.dtype}")
    if arr.ndim != 2 or arr.shape[1] != 2:
        raise CurveError(f"{name}: expected an (N, 2) array of points, got shape {arr.shape}")
    if arr.shape[0] > MAX_POINTS:
        raise CurveError(f"{name}: {arr.shape[0]} points; at most {MAX_POINTS} are allowed")
    return arr.astype(np.float64, copy=True)


def step_vectors(points: np.ndarray) -> np.ndarray:
    """Steps of a closed curve: ``points[(k+1) % N] - points[k]``.

    points : (..., N, 2) float  ->  (..., N, 2) float64
    """
    p = np.asarray(points, dtype=np.float64)
    return np.roll(p, -1, axis=-2) - p


def turn_angles(points: np.ndarray) -> np.ndarray:
    """Signed turn at each point, in (-pi, pi]: from the step arriving to the step leaving.

    Positive means the curve turns left (counter-clockwise) there.
    points : (..., N, 2) float  ->  (..., N) float64; entry k is the turn at point k.
    """
    d = step_vectors(points)
    prev = np.roll(d, 1, axis=-2)
    cross = prev[..., 0] * d[..., 1] - prev[..., 1] * d[..., 0]
    dot = prev[..., 0] * d[..., 0] + prev[..., 1] * d[..., 1]
    return np.arctan2(cross, dot)


def curve_length(points: np.ndarray) -> np.ndarray | float:
    """Length of the closed polygon through the points, closing step included.

    points : (..., N, 2) float  ->  float, or (...,) float64 for a stack of curves
    """
    length = np.linalg.norm(step_vectors(points), axis=-1).sum(axis=-1)
    return float(length) if np.ndim(length) == 0 else length


def closed_curve(
    points,
    *,
    name: str = "curve",
    drop_repeated_end: bool = True,
) -> np.ndarray:
    """Validate a closed plane curve and return it as a fresh ``(N, 2) float64`` array.

    points : (N, 2) real array-like. If the last point repeats the first (within
    ``ZERO_STEP`` of the length) it is dropped when ``drop_repeated_end``.

    Raises CurveError for: wrong shape or dtype, more than MAX_POINTS or fewer than
    MIN_POINTS points, NaN or infinite coordinates, zero-length steps, cusps (a turn
    sharper than CUSP_TURN at one point).
    """
    p = _as_points(points, name)
    if not np.all(np.isfinite(p)):
        bad = int(np.flatnonzero(~np.isfinite(p).all(axis=1))[0])
        raise CurveError(
            f"{name}: point {bad} is not finite ({p[bad].tolist()}); "
            "every coordinate must be a finite number"
        )
    if p.shape[0] >= 2 and drop_repeated_end:
        scale = float(np.ptp(p, axis=0).max()) if p.shape[0] else 0.0
        if np.linalg.norm(p[-1] - p[0]) <= ZERO_STEP * max(scale, 1e-300):
            p = p[:-1]
    n = p.shape[0]
    if n < MIN_POINTS:
        raise CurveError(f"{name}: {n} distinct points; a closed curve needs at least {MIN_POINTS}")
    steps = np.linalg.norm(step_vectors(p), axis=1)
    total = float(steps.sum())
    if not np.isfinite(total) or total <= 0.0:
        raise CurveError(f"{name}: the curve has no length (all points coincide)")
    short = np.flatnonzero(steps <= ZERO_STEP * total)
    if short.size:
        k = int(short[0])
        raise CurveError(
            f"{name}: zero-length step from point {k} to point {(k + 1) % n} "
            f"({short.size} such steps); consecutive points must differ"
        )
    turns = turn_angles(p)
    sharp = np.flatnonzero(np.abs(turns) > CUSP_TURN)
    if sharp.size:
        k = int(sharp[0])
        raise CurveError(
            f"{name}: cusp at point {k} (the direction turns by "
            f"{np.degrees(abs(turns[k])):.1f} degrees there; at most "
            f"{np.degrees(CUSP_TURN):.0f} are allowed): a regular curve never reverses"
        )
    return p


def cumulative_length(points: np.ndarray) -> np.ndarray:
    """Arc length at each point from point 0, with the total length appended.

    points : (N, 2) float  ->  (N + 1,) float64, starting at 0.0
    """
    steps = np.linalg.norm(step_vectors(points), axis=-1)
    return np.concatenate([[0.0], np.cumsum(steps)])


def resample_by_arc_length(points: np.ndarray, samples: int, start: float = 0.0) -> np.ndarray:
    """Points equally spaced in arc length along the closed polygon through ``points``.

    points : (N, 2) float, a closed curve (see :func:`closed_curve`)
    samples : number of output points, MIN_POINTS..MAX_SAMPLES
    start : where the first output point sits, as a fraction of the length from point 0
    Returns (samples, 2) float64.
    """
    samples = _check_samples(samples)
    p = np.asarray(points, dtype=np.float64)
    s = cumulative_length(p)
    total = s[-1]
    closed = np.vstack([p, p[:1]])
    targets = (float(start) % 1.0 + np.arange(samples) / samples) % 1.0 * total
    idx = np.clip(np.searchsorted(s, targets, side="right") - 1, 0, p.shape[0] - 1)
    seg = s[idx + 1] - s[idx]
    frac = ((targets - s[idx]) / seg)[:, None]
    return closed[idx] + frac * (closed[idx + 1] - closed[idx])


def _check_samples(samples) -> int:
    if isinstance(samples, bool) or not isinstance(samples, (int, np.integer)):
        raise CurveError(f"samples: must be an integer, got {samples!r}")
    if not MIN_POINTS <= samples <= MAX_SAMPLES:
        raise CurveError(f"samples: {samples} is outside {MIN_POINTS}..{MAX_SAMPLES}")
    return int(samples)


def curve_from_polyline(
    points, *, closed: bool = True, samples: int | None = None, name: str = "polyline"
) -> np.ndarray:
    """A closed curve from the vertices of a polygon (a Blender poly spline, a point list).

    points : (N, 2) real array-like, in order.
    closed : the polygon is cyclic. If False, the last point must coincide with the first,
        otherwise the curve is open and refused.
    samples : if given, resample to at least this many points equally spaced in arc
        length: more when fewer would lose the turning number or make a cusp (the
        faithfulness rule of :mod:`turnabout.curves.bezier`; corners are not bends).
    Returns (N', 2) float64.
    """
    from .bezier import sample_pieces

    p = _as_points(points, name)
    if not closed:
        _require_closed_ends(p, name)
    p = closed_curve(p, name=name)
    if samples is None:
        return p
    q = np.roll(p, -1, axis=0)
    lines = np.stack([p, p + (q - p) / 3.0, p + 2.0 * (q - p) / 3.0, q], axis=1)
    return sample_pieces(lines, samples=samples, name=name)


def _require_closed_ends(p: np.ndarray, name: str) -> None:
    if p.shape[0] < 2 or not np.all(np.isfinite(p)):
        return  # closed_curve reports these
    scale = max(float(np.ptp(p, axis=0).max()), 1e-300)
    gap = float(np.linalg.norm(p[-1] - p[0]))
    if gap > 1e-6 * scale:
        raise CurveError(
            f"{name}: the curve is open (its ends are {gap:.6g} apart); only closed curves "
            "have a turning number: close it (cyclic spline, or SVG 'Z')"
        )


def bezier_segments_from_knots(
    knots, handles_in, handles_out, *, closed: bool = True
) -> np.ndarray:
    """Cubic Bezier control points of a spline given by knots and their two handles.

    This is the layout of a Blender Bezier spline: each knot has a handle on the side
    it is entered from (``handle_left``) and on the side it is left by (``handle_right``).
    knots, handles_in, handles_out : (n, 2) float
    closed : the spline is cyclic (adds the segment from the last knot back to the first)
    Returns (k, 4, 2) float64 with k = n if closed else n - 1; segment i is
    (knot i, out-handle i, in-handle i+1, knot i+1).
    """
    kn = _as_points(knots, "knots")
    hi = _as_points(handles_in, "handles_in")
    ho = _as_points(handles_out, "handles_out")
    if not (kn.shape == hi.shape == ho.shape):
        raise CurveError(
            f"knots {kn.shape}, handles_in {hi.shape} and handles_out {ho.shape} must match"
        )
    nxt = np.roll(np.arange(kn.shape[0]), -1)
    seg = np.stack([kn, ho, hi[nxt], kn[nxt]], axis=1)
    return seg if closed else seg[:-1]


def curve_from_bezier_segments(
    control_points,
    *,
    closed: bool = True,
    samples: int = 1024,
    name: str = "Bezier spline",
) -> np.ndarray:
    """A closed curve sampled from cubic Bezier segments, equally spaced in arc length.

    control_points : (k, 4, 2) float; segment i runs from control_points[i, 0] to
        control_points[i, 3] with handles [i, 1] and [i, 2]. Segment i must end where
        segment i+1 starts (and, when ``closed``, the last must end where the first starts).
    closed : the spline is cyclic; if the last segment does not end where the first
        starts, a straight step closes it (as SVG 'Z' does). If False the last segment
        must end at the first segment's start, otherwise the curve is open and refused.
    samples : points asked for (MIN_POINTS..MAX_SAMPLES); raised to the least the curve's
        bends need (see :mod:`turnabout.curves.bezier`), never lowered.
    Returns (N, 2) float64, N >= samples. Messages number segments from 0.
    """
    from .bezier import sample_pieces

    try:
        ctrl = np.asarray(control_points, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise CurveError(f"{name}: control points are not an array of numbers ({exc})") from None
    if ctrl.ndim != 3 or ctrl.shape[1:] != (4, 2):
        raise CurveError(f"{name}: expected (k, 4, 2) control points, got shape {ctrl.shape}")
    k = ctrl.shape[0]
    if not 1 <= k <= MAX_SEGMENTS:
        raise CurveError(f"{name}: {k} segments; 1..{MAX_SEGMENTS} are allowed")
    if not np.all(np.isfinite(ctrl)):
        bad = int(np.flatnonzero(~np.isfinite(ctrl).reshape(k, -1).all(axis=1))[0])
        raise CurveError(f"{name}: segment {bad} has a coordinate that is not finite")
    samples = _check_samples(samples)
    scale = max(float(np.ptp(ctrl.reshape(-1, 2), axis=0).max()), 1e-300)
    ends = ctrl[:, 3]
    starts = np.roll(ctrl[:, 0], -1, axis=0)
    gaps = np.linalg.norm(ends - starts, axis=1)
    inner = gaps[:-1]
    if np.any(inner > 1e-6 * scale):
        i = int(np.flatnonzero(inner > 1e-6 * scale)[0])
        raise CurveError(
            f"{name}: segment {i} ends {gaps[i]:.6g} away from where "
            f"segment {i + 1} starts; segments must join"
        )
    if not closed:
        _require_closed_ends(np.stack([ctrl[0, 0], ctrl[-1, 3]]), name)
    elif gaps[-1] > 1e-6 * scale:  # cyclic: a straight step closes the gap, as SVG 'Z' does
        a, b = ctrl[-1, 3], ctrl[0, 0]
        line = np.stack([a, a + (b - a) / 3, a + 2 * (b - a) / 3, b])[None]
        ctrl = np.concatenate([ctrl, line])
        k += 1
    hull = np.linalg.norm(np.diff(ctrl, axis=1), axis=2).sum(axis=1)
    flat = np.flatnonzero(hull <= ZERO_STEP * hull.sum())
    if flat.size:
        raise CurveError(
            f"{name}: segment {int(flat[0])} has zero length (all its control points coincide)"
        )
    return sample_pieces(ctrl, np.arange(k), samples=samples, name=name)


def curve_points_from_local_xyz(
    points, *, tolerance: float = 1e-6, name: str = "curve"
) -> np.ndarray:
    """The XY coordinates of points that lie in the local plane z = 0.

    points : (N, 3) float, e.g. evaluated curve points in an object's local frame.
    tolerance : largest |z| allowed, as a fraction of the curve's XY extent.
    Returns (N, 2) float64. Raises CurveError naming the largest |z| when not planar.
    """
    try:
        p = np.asarray(points, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise CurveError(f"{name}: not an array of numbers ({exc})") from None
    if p.ndim != 2 or p.shape[1] != 3:
        raise CurveError(f"{name}: expected (N, 3) points, got shape {p.shape}")
    if p.shape[0] > MAX_POINTS:
        raise CurveError(f"{name}: {p.shape[0]} points; at most {MAX_POINTS} are allowed")
    if not np.all(np.isfinite(p)):
        raise CurveError(f"{name}: some coordinates are not finite")
    if p.shape[0] == 0:
        raise CurveError(f"{name}: no points")
    extent = max(float(np.ptp(p[:, :2], axis=0).max()), 1e-300)
    zmax = float(np.abs(p[:, 2]).max())
    if zmax > tolerance * extent:
        raise CurveError(
            f"{name}: not planar: a point lies {zmax:.6g} off the local XY plane "
            f"(at most {tolerance:g} of the curve's size, {tolerance * extent:.3g}, is allowed); "
            "plane curves must lie in z = 0 of the object's own frame"
        )
    return p[:, :2].copy()
