"""Self-crossings of a closed polygon, their signs, and Whitney's formula as a check.

Whitney ("On regular closed curves in the plane", Compositio Mathematica 4, 1937,
Theorem 2): for a generic closed curve (only transversal double points) traversed from
a base point on the outer boundary,

    turning number = mu + sum of the crossing signs,

where mu = +1 if the curve turns left (runs counter-clockwise) at the base point and -1
otherwise. Each crossing is passed twice; its sign is +1 when the second passage crosses
the first from its left to its right (the second tangent points clockwise of the first)
and -1 otherwise. (Our statement of the sign rule; it is the one for which the formula
gives +1 for the round circle, 2 for the limacon with an inner loop and 0 for the
figure-eight, see docs/curves.md.)
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .sampling import step_vectors, turn_angles
from .turning import turning_number_by_total_turning

#: Most pairs of steps tested at once (bounds the memory of one chunk).
PAIRS_PER_CHUNK = 4_000_000


@dataclass(frozen=True)
class Crossings:
    """The self-crossings of a closed polygon, ordered from a base point.

    steps : (M, 2) int64, the two crossing steps, the one passed first from the base first
    params : (M, 2) float64, where along each of those steps (0..1) the crossing lies
    positions : (M, 2) float64, the crossing points
    signs : (M,) int8, Whitney's sign of each crossing (see the module docstring)
    sines : (M,) float64, |sine| of the angle between the two passages (transversality)
    base : index of the base point
    """

    steps: np.ndarray
    params: np.ndarray
    positions: np.ndarray
    signs: np.ndarray
    sines: np.ndarray
    base: int

    @property
    def count(self) -> int:
        return int(self.signs.shape[0])

    @property
    def sign_sum(self) -> int:
        return int(self.signs.astype(np.int64).sum())


def _cross(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0]


def crossing_pairs(points: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """All pairs of non-adjacent steps of a closed polygon that cross.

    points : (N, 2) float. A crossing is counted on the half-open steps [p_k, p_k+1), so a
    crossing through a point is found once.
    Returns (pairs (M, 2) int64 with i < j, params (M, 2) float64 along steps i and j,
    positions (M, 2) float64).
    """
    p = np.asarray(points, dtype=np.float64)
    n = p.shape[0]
    d = step_vectors(p)
    q = p + d
    pad = 1e-9 * float(np.ptp(p, axis=0).max()) if n else 0.0  # rounding margin
    lo = np.minimum(p, q) - pad
    hi = np.maximum(p, q) + pad
    chunk = max(1, PAIRS_PER_CHUNK // max(n, 1))
    js = np.arange(n)
    found_i, found_j = [], []
    for i0 in range(0, n, chunk):  # chunks of rows, each vectorised over all columns
        ii = np.arange(i0, min(n, i0 + chunk))
        mask = js[None, :] > ii[:, None] + 1
        mask &= ~((ii[:, None] == 0) & (js[None, :] == n - 1))  # closing step is adjacent
        for axis in (0, 1):
            mask &= lo[ii, axis][:, None] <= hi[None, :, axis]
            mask &= lo[None, :, axis] <= hi[ii, axis][:, None]
        a, b = np.nonzero(mask)
        found_i.append(ii[a])
        found_j.append(b)
    i = np.concatenate(found_i) if found_i else np.zeros(0, np.int64)
    j = np.concatenate(found_j) if found_j else np.zeros(0, np.int64)
    r, s = d[i], d[j]
    w = p[j] - p[i]
    den = _cross(r, s)
    ok = den != 0.0
    safe = np.where(ok, den, 1.0)
    t = _cross(w, s) / safe
    u = _cross(w, r) / safe
    # half-open steps, shifted by a rounding margin so a crossing through a point is
    # found exactly once even when rounding puts it a hair outside the step
    e = 1e-9
    hit = ok & (t >= -e) & (t < 1 - e) & (u >= -e) & (u < 1 - e)
    i, j, t, u = i[hit], j[hit], t[hit], u[hit]
    pos = p[i] + t[:, None] * d[i]
    return (np.stack([i, j], axis=1).astype(np.int64), np.stack([t, u], axis=1), pos)


def outer_base_point(points: np.ndarray) -> int:
    """Index of a point on the outer boundary: the lowest point (leftmost among ties).

    An extreme point of the polygon lies on the boundary of the unbounded region.
    """
    p = np.asarray(points, dtype=np.float64)
    return int(np.lexsort((p[:, 0], p[:, 1]))[0])


def self_crossings(points: np.ndarray, base: int | None = None) -> Crossings:
    """The self-crossings of a closed polygon with Whitney's signs, ordered from ``base``.

    points : (N, 2) float; base : index of the base point (default: :func:`outer_base_point`)
    """
    p = np.asarray(points, dtype=np.float64)
    n = p.shape[0]
    base = outer_base_point(p) if base is None else int(base) % n
    pairs, params, pos = crossing_pairs(p)
    along = (pairs - base) % n + params  # distance along the curve from the base, in steps
    swap = along[:, 1] < along[:, 0]
    first = np.where(swap, pairs[:, 1], pairs[:, 0])
    second = np.where(swap, pairs[:, 0], pairs[:, 1])
    prm = np.where(swap[:, None], params[:, ::-1], params)
    order = np.argsort(np.minimum(along[:, 0], along[:, 1]), kind="stable")
    d = step_vectors(p)
    d = d / np.linalg.norm(d, axis=1, keepdims=True)
    c = _cross(d[second], d[first])
    signs = np.sign(c).astype(np.int8)
    return Crossings(
        steps=np.stack([first, second], axis=1)[order],
        params=prm[order],
        positions=pos[order],
        signs=signs[order],
        sines=np.abs(c)[order],
        base=base,
    )


@dataclass(frozen=True)
class WhitneyCheck:
    """Whitney's formula on one closed curve.

    turning_number : by total turning
    mu : +1 or -1, the turn at the base point on the outer boundary
    crossing_sum : sum of the crossing signs
    crossings : the crossings
    generic : only transversal double points, none at the base point (the formula's premise)
    """

    turning_number: int
    mu: int
    crossing_sum: int
    crossings: Crossings
    generic: bool

    @property
    def whitney_value(self) -> int:
        return self.mu + self.crossing_sum

    @property
    def holds(self) -> bool:
        return self.whitney_value == self.turning_number


def whitney_check(points: np.ndarray, min_sine: float = 1e-6) -> WhitneyCheck:
    """Check Whitney's formula on a closed curve ``points : (N, 2)``, base on the outer boundary.

    ``generic`` is False when two crossings coincide (a triple point), a crossing is
    tangential (|sine| below ``min_sine``) or lies on a step at the base point; the formula
    is only claimed for generic curves.
    """
    p = np.asarray(points, dtype=np.float64)
    base = outer_base_point(p)
    cr = self_crossings(p, base)
    mu = int(np.sign(turn_angles(p)[base]))
    n = p.shape[0]
    scale = float(np.ptp(p, axis=0).max())
    generic = mu != 0 and bool(np.all(cr.sines >= min_sine))
    if cr.count:
        at_base = np.isin(cr.steps, [base, (base - 1) % n]).any()
        generic = generic and not at_base
        if cr.count > 1:
            key = np.lexsort((cr.positions[:, 1], cr.positions[:, 0]))
            gaps = np.linalg.norm(np.diff(cr.positions[key], axis=0), axis=1)
            generic = generic and bool(np.all(gaps > 1e-9 * scale))
    return WhitneyCheck(
        turning_number=int(turning_number_by_total_turning(p)),
        mu=mu,
        crossing_sum=cr.sign_sum,
        crossings=cr,
        generic=bool(generic),
    )
