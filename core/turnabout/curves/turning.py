"""Turning numbers of closed plane curves, by two independent methods.

The turning number of a closed regular curve is the number of full turns its tangent
makes along one traversal (the degree of its tangent map; Whitney, "On regular closed
curves in the plane", Compositio Mathematica 4, 1937). For the polygon through the
sampled points the tangent is the step direction and it turns at the points.

1. **Total turning**: the signed turns at the points (each in (-pi, pi)) add up to
   2*pi times the turning number exactly, whatever the sampling and the start point.
2. **Direction count**: fix a direction. Each time the tangent passes that direction
   while the curve turns left it counts +1, while it turns right -1. The sum is the
   turning number (the degree of a map of the circle counted at one regular value).

The two use different arithmetic (a sum of angles versus a count of sign changes of one
coordinate), so their agreement is a check on both.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .sampling import step_vectors, turn_angles


def wrap_angle(angle):
    """Angles wrapped to (-pi, pi]. Any shape; float64."""
    a = np.asarray(angle, dtype=np.float64)
    return np.pi - np.mod(np.pi - a, 2 * np.pi)


def total_turning(points: np.ndarray) -> np.ndarray | float:
    """Sum of the signed turns at the points, radians (2*pi times the turning number).

    points : (..., N, 2) float, closed curves  ->  float or (...,) float64
    """
    t = turn_angles(points).sum(axis=-1)
    return float(t) if np.ndim(t) == 0 else t


def turning_number_by_total_turning(points: np.ndarray) -> np.ndarray | int:
    """Turning number as the total turning divided by 2*pi.

    points : (..., N, 2) float, closed curves  ->  int or (...,) int64
    """
    turns = np.asarray(total_turning(points)) / (2 * np.pi)
    n = np.rint(turns)
    if np.any(np.abs(turns - n) > 1e-6):  # a closed polygon always sums to a whole turn
        raise ValueError("total turning is not a whole number of turns: the curve is not closed")
    n = n.astype(np.int64)
    return int(n) if n.ndim == 0 else n


def tangent_angles(points: np.ndarray) -> np.ndarray:
    """Continuous tangent angle of each step (a lift of the step directions).

    points : (..., N, 2) float  ->  (..., N) float64, entry k the angle of step k
    (from point k to point k+1). Entry 0 lies in (-pi, pi]; the angle of step N (step 0
    again) would be entry 0 plus 2*pi times the turning number.
    """
    d = step_vectors(points)
    first = np.arctan2(d[..., 0, 1], d[..., 0, 0])
    turns = turn_angles(points)  # turns[k] is from step k-1 to step k
    rel = np.cumsum(turns[..., 1:], axis=-1)
    zero = np.zeros(rel.shape[:-1] + (1,))
    return first[..., None] + np.concatenate([zero, rel], axis=-1)


def direction_passages(points: np.ndarray, direction: float = 0.0) -> tuple[np.ndarray, np.ndarray]:
    """Where the tangent passes a fixed direction, and the sign of each passage.

    The tangent jumps at point k from the direction of step k-1 to that of step k, turning
    by less than pi. It passes ``direction`` there if the two step directions lie on
    opposite sides of it (compared after wrapping the difference to (-pi, pi], so each
    passage is counted exactly once even when a step points exactly along it).

    points : (..., N, 2) float, closed curves
    direction : radians, measured counter-clockwise from +x
    Returns (sign (..., N) int8: +1 where the curve turns left through the direction at
    point k, -1 where it turns right, 0 elsewhere; rel (..., N) float64, the angle of
    step k relative to the direction, in (-pi, pi]).
    """
    d = step_vectors(points)
    rel = wrap_angle(np.arctan2(d[..., 1], d[..., 0]) - float(direction))
    prev = np.roll(rel, 1, axis=-1)
    side = rel >= 0.0
    crosses = (side != np.roll(side, 1, axis=-1)) & (np.abs(rel - prev) < np.pi)
    sign = np.where(crosses, np.sign(rel - prev), 0.0).astype(np.int8)
    return sign, rel


def turning_number_by_direction_count(points: np.ndarray, direction: float = 0.0):
    """Turning number as the signed count of points where the tangent points along ``direction``.

    points : (..., N, 2) float, closed curves; direction : radians from +x
    Returns int or (...,) int64.
    """
    sign, _ = direction_passages(points, direction)
    n = sign.astype(np.int64).sum(axis=-1)
    return int(n) if n.ndim == 0 else n


@dataclass(frozen=True)
class TurningReport:
    """Both turning-number figures of one closed curve.

    by_total_turning, by_direction_count : the turning number by each method
    total_turning : radians
    passages_left, passages_right : how many points count +1 and -1 in the direction count
    direction : radians, the direction used
    """

    by_total_turning: int
    by_direction_count: int
    total_turning: float
    passages_left: int
    passages_right: int
    direction: float

    @property
    def agree(self) -> bool:
        return self.by_total_turning == self.by_direction_count


def turning_report(points: np.ndarray, direction: float = 0.0) -> TurningReport:
    """Turning number of one closed curve ``points : (N, 2)`` by both methods."""
    sign, _ = direction_passages(points, direction)
    return TurningReport(
        by_total_turning=int(turning_number_by_total_turning(points)),
        by_direction_count=int(sign.astype(np.int64).sum()),
        total_turning=float(total_turning(points)),
        passages_left=int((sign > 0).sum()),
        passages_right=int((sign < 0).sum()),
        direction=float(direction),
    )


def turning_number(points: np.ndarray, direction: float = 0.0) -> int:
    """The turning number of a closed curve ``points : (N, 2)``, checked by both methods.

    Raises ArithmeticError if the two methods disagree (which would be a defect here).
    """
    rep = turning_report(points, direction)
    if not rep.agree:
        raise ArithmeticError(
            f"turning number methods disagree: total turning gives {rep.by_total_turning}, "
            f"direction count gives {rep.by_direction_count}"
        )
    return rep.by_total_turning
