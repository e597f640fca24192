"""Regularity of the continuous homotopy, sampled finely in space and densely in time.

Two figures, each with where and when it is worst:

* the *normalised ratio*: sigma_min / sigma_max of DF . DF0^-1, the distortion of the
  map relative to the round sphere F0 (so the round sphere scores 1 and a pinch or a
  crease scores 0). In (theta, lat) this is sigma_min / sigma_max of
  [F_theta / cos(lat), F_lat]; at the poles it is taken in the chart
  (x, y) = cos(lat) (cos theta, sin theta), which is regular there.
* the largest principal curvature times the radius (the round sphere scores 1).

Times always include every stage boundary, so a thin failure at a switch-over is seen.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..progress import ProgressFn, no_progress
from . import construction as C
from .controls import STAGE_NAMES, ControlError, Controls

# Acceptance of the fast build check (see README, "Regularity"): the normalised ratio must
# stay at least MIN_RATIO everywhere; the curvature is reported, and refused only beyond
# MAX_CURVATURE.
MIN_RATIO = 0.05
MAX_CURVATURE = float("inf")


class RegularityError(ControlError):
    """The controls give a homotopy that is not regular enough; says where and when."""


@dataclass
class RegularityReport:
    min_ratio: float
    min_ratio_at: tuple[float, float, float]  # (t, theta, lat)
    max_curvature: float
    max_curvature_at: tuple[float, float, float]
    pole_min_ratio: float
    times: np.ndarray
    ratio_per_time: np.ndarray
    curvature_per_time: np.ndarray
    grid: tuple[int, int] = (0, 0)
    notes: list[str] = field(default_factory=list)

    def first_failure(self, min_ratio: float = MIN_RATIO, max_curvature: float = MAX_CURVATURE):
        bad = np.nonzero(
            (self.ratio_per_time < min_ratio) | (self.curvature_per_time > max_curvature)
        )[0]
        return None if bad.size == 0 else int(bad[0])

    def summary(self) -> str:
        t, th, la = self.min_ratio_at
        tc, thc, lac = self.max_curvature_at
        return (
            f"grid {self.grid[0]} x {self.grid[1]} (theta x lat), {self.times.size} times\n"
            f"min normalised ratio {self.min_ratio:.4f} at t={t:.4f}, "
            f"theta={np.degrees(th):.2f} deg, "
            f"lat={np.degrees(la):.2f} deg\n"
            f"poles (chart x, y): min ratio {self.pole_min_ratio:.4f}\n"
            f"max curvature x radius {self.max_curvature:.1f} at t={tc:.4f}, "
            f"theta={np.degrees(thc):.2f} deg, lat={np.degrees(lac):.2f} deg"
        )


def scan_times(controls: Controls, count: int) -> np.ndarray:
    """``count`` evenly spaced times in [0, 1] plus every stage boundary, sorted and unique."""
    bounds = [v for name in STAGE_NAMES for v in controls.timing[name]]
    return np.unique(np.concatenate([np.linspace(0.0, 1.0, count), bounds]))


def _ratio(F_theta, F_lat, lat):
    a = F_theta / np.cos(lat)[:, None, None]
    b = F_lat
    aa, bb, ab = (a * a).sum(-1), (b * b).sum(-1), (a * b).sum(-1)
    tr = aa + bb
    det = np.sqrt(np.maximum(aa * bb - ab * ab, 0.0))
    disc = np.sqrt(np.maximum(tr * tr / 4.0 - det * det, 0.0))
    smax2 = tr / 2.0 + disc
    return det / np.maximum(smax2, 1e-300)


def _max_curvature(controls, t, theta, lat, h=1e-5):
    """Largest |principal curvature| on the grid, (l, m)."""
    F, Ft, Fl = C.jacobian(controls, t, theta, lat)
    _, Ftp, Flp = C.jacobian(controls, t, theta + h, lat)
    _, Ftm, Flm = C.jacobian(controls, t, theta - h, lat)
    _, _, Flu = C.jacobian(controls, t, theta, lat + h)
    _, _, Fld = C.jacobian(controls, t, theta, lat - h)
    Ftt = (Ftp - Ftm) / (2 * h)
    Ftl = (Flp - Flm) / (2 * h)
    Fll = (Flu - Fld) / (2 * h)
    n = np.cross(Ft, Fl)
    nn = np.sqrt((n * n).sum(-1))
    n = n / np.maximum(nn, 1e-300)[..., None]
    E, Fm, G = (Ft * Ft).sum(-1), (Ft * Fl).sum(-1), (Fl * Fl).sum(-1)
    L, M, N = (Ftt * n).sum(-1), (Ftl * n).sum(-1), (Fll * n).sum(-1)
    det1 = np.maximum(E * G - Fm * Fm, 1e-300)
    H = (E * N - 2 * Fm * M + G * L) / (2 * det1)
    K = (L * N - M * M) / det1
    root = np.sqrt(np.maximum(H * H - K, 0.0))
    return np.abs(H) + root


def _pole_ratio(controls, t, h=1e-4):
    """Normalised ratio at both poles in the chart (x, y) = cos(lat) (cos theta, sin theta)."""
    out = []
    for sign in (-1.0, 1.0):
        lat = np.array([sign * (np.pi / 2 - h)])
        pts = C.surface(controls, t, np.array([0.0, np.pi / 2, np.pi, 3 * np.pi / 2]), lat)[0]
        # chart points (h,0), (0,h), (-h,0), (0,-h) around the pole (to first order in h)
        dx = (pts[0] - pts[2]) / (2 * h)
        dy = (pts[1] - pts[3]) / (2 * h)
        J = np.stack([dx, dy], -1)
        s = np.linalg.svd(J, compute_uv=False)
        out.append(s[-1] / s[0])
    return min(out)


def scan(
    controls: Controls,
    n_theta: int = 720,
    n_lat: int = 361,
    n_times: int = 400,
    curvature: bool = True,
    progress: ProgressFn = no_progress,
) -> RegularityReport:
    """Scan the homotopy on an n_theta x n_lat grid (poles included) at n_times times."""
    theta = np.arange(n_theta) * (2 * np.pi / n_theta)
    lat_all = np.linspace(-np.pi / 2, np.pi / 2, n_lat)
    lat = lat_all[1:-1]  # poles are handled in their own chart
    times = scan_times(controls, n_times)
    ratio_t = np.empty(times.size)
    curv_t = np.zeros(times.size)
    best = (np.inf, (0.0, 0.0, 0.0))
    worst_k = (0.0, (0.0, 0.0, 0.0))
    pole_min = np.inf
    for i, t in enumerate(times):
        _, Ft, Fl = C.jacobian(controls, float(t), theta, lat)
        r = _ratio(Ft, Fl, lat)
        j = np.unravel_index(np.argmin(r), r.shape)
        pr = _pole_ratio(controls, float(t))
        pole_min = min(pole_min, pr)
        ratio_t[i] = min(float(r[j]), pr)
        if r[j] < best[0]:
            best = (float(r[j]), (float(t), float(theta[j[1]]), float(lat[j[0]])))
        if curvature:
            k = _max_curvature(controls, float(t), theta, lat)
            jk = np.unravel_index(np.argmax(k), k.shape)
            curv_t[i] = k[jk]
            if k[jk] > worst_k[0]:
                worst_k = (float(k[jk]), (float(t), float(theta[jk[1]]), float(lat[jk[0]])))
        progress(i + 1, times.size)
    if pole_min < best[0]:
        best = (pole_min, best[1])
    return RegularityReport(
        min_ratio=best[0],
        min_ratio_at=best[1],
        max_curvature=worst_k[0],
        max_curvature_at=worst_k[1],
        pole_min_ratio=float(pole_min),
        times=times,
        ratio_per_time=ratio_t,
        curvature_per_time=curv_t,
        grid=(n_theta, n_lat),
    )


def quick_scan(controls: Controls, progress: ProgressFn = no_progress) -> RegularityReport:
    """The fast check every build runs: one strip period is enough by the exact n-fold symmetry."""
    return scan(
        controls,
        n_theta=24 * controls.strips,
        n_lat=121,
        n_times=120,
        curvature=True,
        progress=progress,
    )


_checked: dict[str, RegularityReport] = {}


def require_regular(controls: Controls, progress: ProgressFn = no_progress) -> RegularityReport:
    """Run the fast check (cached per controls) and raise RegularityError if it fails."""
    key = repr(controls.as_dict())
    rep = _checked.get(key)
    if rep is None:
        rep = quick_scan(controls, progress=progress)
        _checked[key] = rep
    i = rep.first_failure()
    if i is not None:
        t = rep.times[i]
        lo, hi = controls_range_text(controls)
        raise RegularityError(
            "controls",
            f"the homotopy is not regular enough at t={t:.4f} (normalised ratio "
            f"{rep.ratio_per_time[i]:.4g}, floor {MIN_RATIO}; curvature x radius "
            f"{rep.curvature_per_time[i]:.1f}, ceiling {MAX_CURVATURE:g}); worst point "
            f"t={rep.min_ratio_at[0]:.4f}, theta={np.degrees(rep.min_ratio_at[1]):.1f} deg, "
            f"lat={np.degrees(rep.min_ratio_at[2]):.1f} deg. Documented valid range: {lo}; {hi}",
        )
    return rep


def controls_range_text(controls: Controls) -> tuple[str, str]:
    from .controls import MAX_STRIPS, MIN_STRIPS, depth_range

    lo, hi = depth_range(controls.strips)
    return (
        f"strips {MIN_STRIPS}-{MAX_STRIPS}",
        f"depth {lo:g}-{hi:g} with the default stage timing",
    )
