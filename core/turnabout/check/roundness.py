"""Is the last frame the first frame's round sphere with the orientation reversed?

The first frame's sphere is fitted by linear least squares (|p|^2 = 2 c . p + (r^2 - |c|^2),
common practice). The last frame is compared with it both ways: every last-frame vertex must
lie on the sphere (radial deviation), and every first-frame vertex (a fine sample of the
sphere) must have a last-frame vertex nearby (coverage, up to the last frame's edge length,
since a vertex sample is only that dense). The orientation and the size are compared
separately through the signed volumes: the orientation is reversed when their signs differ;
the size is kept when their magnitudes agree.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass

import numpy as np


def fit_sphere(points: np.ndarray) -> tuple[np.ndarray, float]:
    """(center (3,), radius) of the least-squares sphere through points (N, 3)."""
    p = np.asarray(points, np.float64)
    a = np.hstack([2 * p, np.ones((p.shape[0], 1))])
    b = np.sum(p * p, axis=1)
    sol, *_ = np.linalg.lstsq(a, b, rcond=None)
    c = sol[:3]
    r2 = sol[3] + c @ c
    return c, float(np.sqrt(max(r2, 0.0)))


def nearest_distances(a: np.ndarray, b: np.ndarray, reach: float) -> np.ndarray:
    """Distance from each point of a (N, 3) to its nearest point of b (K, 3).

    Exact when that distance is at most ``reach``; inf otherwise. A uniform grid with
    cells of size ``reach``: only the 27 cells around each point are searched.
    """
    a = np.asarray(a, np.float64)
    b = np.asarray(b, np.float64)
    out = np.full(a.shape[0], np.inf)
    if a.size == 0 or b.size == 0 or reach <= 0:
        return out
    origin = np.minimum(a.min(axis=0), b.min(axis=0)) - reach
    cb = np.floor((b - origin) / reach).astype(np.int64)
    ca = np.floor((a - origin) / reach).astype(np.int64)
    dims = np.maximum(cb.max(axis=0), ca.max(axis=0)) + 2
    key_b = (cb[:, 0] * dims[1] + cb[:, 1]) * dims[2] + cb[:, 2]
    order = np.argsort(key_b, kind="stable")
    sk = key_b[order]
    for dx in (-1, 0, 1):
        for dy in (-1, 0, 1):
            for dz in (-1, 0, 1):
                c = ca + np.array([dx, dy, dz])
                key = (c[:, 0] * dims[1] + c[:, 1]) * dims[2] + c[:, 2]
                lo = np.searchsorted(sk, key, "left")
                hi = np.searchsorted(sk, key, "right")
                cnt = hi - lo
                for k in range(int(cnt.max(initial=0))):
                    has = cnt > k
                    j = order[lo[has] + k]
                    d = np.linalg.norm(a[has] - b[j], axis=1)
                    out[has] = np.minimum(out[has], d)
    out[out > reach] = np.inf
    return out


@dataclass(frozen=True)
class EversionCheck:
    """The finished-eversion test: everted is True when every part holds."""

    everted: bool
    first_is_round: bool
    center: tuple[float, float, float]
    radius: float
    first_deviation: float  # max radial deviation of the first frame / radius
    last_deviation: float  # last frame -> sphere: max radial deviation / radius
    last_coverage: float  # sphere -> last frame: max nearest-vertex distance / radius
    coverage_allowance: float  # allowed coverage: last frame's longest edge + tolerance
    orientation_reversed: bool  # the signed volumes have opposite signs
    volume_ratio: float  # signed volume last / first (-1 for a finished eversion)
    reason: str
    same_volume: bool = False  # |volume_ratio| within the size allowance of 1

    def to_dict(self) -> dict:
        d = asdict(self)
        d["center"] = list(self.center)
        return {
            k: (None if isinstance(v, float) and not np.isfinite(v) else v) for k, v in d.items()
        }


def eversion_check(
    first: np.ndarray,
    last: np.ndarray,
    edges: np.ndarray,
    volume_first: float,
    volume_last: float,
    tolerance: float = 0.01,
) -> EversionCheck:
    """Compare the last frame with the first frame's round sphere (see module docstring).

    first, last : (V, 3) positions; edges : (E, 2) int; tolerance : fraction of the radius.
    """
    P0 = np.asarray(first, np.float64)
    P1 = np.asarray(last, np.float64)
    c, r = fit_sphere(P0)
    nan = float("nan")
    if not r > 0:
        return EversionCheck(False, False, tuple(c), r, nan, nan, nan, nan, False, nan,
                             "the first frame has no extent")  # fmt: skip
    dev0 = float(np.max(np.abs(np.linalg.norm(P0 - c, axis=1) - r)) / r)
    dev1 = float(np.max(np.abs(np.linalg.norm(P1 - c, axis=1) - r)) / r)
    longest = float(np.max(np.linalg.norm(P1[edges[:, 0]] - P1[edges[:, 1]], axis=1)))
    allowance = longest + tolerance * r
    # the first frame samples the sphere; a few thousand of its vertices are plenty
    sample = P0[:: max(1, P0.shape[0] // 4096)]
    cover = nearest_distances(sample, P1, allowance)
    coverage = float(np.max(cover)) / r
    ratio = volume_last / volume_first if volume_first else nan
    # orientation: the sign of the ratio; size: its magnitude, allowed 3 x tolerance + 0.02
    # off 1 (the volume goes with the cube of the radius, and meshes lose a little of it)
    reversed_ = bool(np.isfinite(ratio) and ratio < 0)
    size_allowance = 3 * tolerance + 0.02
    same_size = bool(np.isfinite(ratio) and abs(abs(ratio) - 1.0) <= size_allowance)
    round_ = dev0 <= tolerance
    reasons = []
    if not round_:
        reasons.append(f"the first frame is not a round sphere (deviation {dev0:.3g} r)")
    if dev1 > tolerance:
        reasons.append(f"the last frame leaves the sphere (deviation {dev1:.3g} r)")
    if not coverage <= allowance / r:
        reasons.append("the last frame does not cover the whole sphere")
    if not np.isfinite(ratio):
        reasons.append("the orientation cannot be compared (the first frame has no volume)")
    elif not reversed_:
        reasons.append(
            f"the orientation is not reversed (signed volume ratio last / first {ratio:+.3g})"
        )
    if np.isfinite(ratio) and not same_size:
        reasons.append(
            f"the enclosed volume changed: |last / first| = {abs(ratio):.3g} (allowed "
            f"1 +- {size_allowance:.3g}); the orientation is "
            f"{'reversed' if reversed_ else 'not reversed'}"
        )
    everted = not reasons
    return EversionCheck(
        everted=everted,
        first_is_round=round_,
        center=(float(c[0]), float(c[1]), float(c[2])),
        radius=r,
        first_deviation=dev0,
        last_deviation=dev1,
        last_coverage=coverage,
        coverage_allowance=allowance / r,
        orientation_reversed=reversed_,
        volume_ratio=float(ratio),
        same_volume=same_size,
        reason="; ".join(reasons) if reasons else "last frame is the first sphere, reversed",
    )
