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
# stay at least MIN_RATIO everywhere; the curvature is reported, never refused.
MIN_RATIO = 0.05


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
    per_strip: bool = False  # grid[0] samples one strip period rather than the circle
    notes: list[str] = field(default_factory=list)
    # Bend profile (with curvature only): the scan's theta (one strip or the whole circle)
    # and interior latitudes, and the largest normal-turning rate |dn/dtheta| per theta
    # (over every latitude and time) and |dn/dlat| per latitude (over every theta and time),
    # in radians per radian. The bend-adaptive mesh (eversion.spacing) is built from them.
    theta: np.ndarray = field(default_factory=lambda: np.zeros(0))
    lat: np.ndarray = field(default_factory=lambda: np.zeros(0))
    bend_theta: np.ndarray = field(default_factory=lambda: np.zeros(0))
    bend_lat: np.ndarray = field(default_factory=lambda: np.zeros(0))

    def first_failure(self, min_ratio: float = MIN_RATIO) -> int | None:
        """Index into ``times`` of the first time whose ratio is below ``min_ratio``, or None."""
        bad = np.nonzero(self.ratio_per_time < min_ratio)[0]
        return None if bad.size == 0 else int(bad[0])

    def summary(self) -> str:
        t, th, la = self.min_ratio_at
        tc, thc, lac = self.max_curvature_at
        return (
            f"grid {self.grid[0]} x {self.grid[1]} "
            f"({'theta per strip' if self.per_strip else 'theta'} x lat), "
            f"{self.times.size} times\n"
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


def _fundamental_forms(controls, t, theta, lat, h=1e-5):
    """(E, F, G, L, M, N) of the surface on the grid, each (l, m).

    First derivatives are exact (see :func:`construction.jacobian`); the second are central
    differences of them, with error O(h^2).
    """
    _, Ft, Fl = C.jacobian(controls, t, theta, lat)
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
    return E, Fm, G, L, M, N


def _curvature_and_rates(controls, t, theta, lat):
    """(largest |principal curvature|, |dn/dtheta|, |dn/dlat|) on the grid, each (l, m).

    The rates are how fast the unit normal turns per unit of each parameter, in radians:
    dn(X) = -S(X), and |S(F_theta)|^2 = [L M] I^-1 [L M]^T (similarly [M N] for lat). A mesh
    edge of parameter length h bends its two faces by about rate x h.
    """
    E, Fm, G, L, M, N = _fundamental_forms(controls, t, theta, lat)
    det1 = np.maximum(E * G - Fm * Fm, 1e-300)
    H = (E * N - 2 * Fm * M + G * L) / (2 * det1)
    K = (L * N - M * M) / det1
    root = np.sqrt(np.maximum(H * H - K, 0.0))
    rate_t = np.sqrt(np.maximum(L * L * G - 2 * L * M * Fm + M * M * E, 0.0) / det1)
    rate_l = np.sqrt(np.maximum(M * M * G - 2 * M * N * Fm + N * N * E, 0.0) / det1)
    return np.abs(H) + root, rate_t, rate_l


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


# theta x lat per time of a scan: about 2.4 GB of float64 arrays at the limit
MAX_SCAN_POINTS = 10**8


def scan_grid_problem(n_theta: int, n_lat: int, n_times: int) -> str | None:
    """What is wrong with a scan grid (``--scan-grid THETA LAT TIMES``), or None if usable."""
    if n_theta < 4 or n_lat < 3 or n_times < 2:
        return (
            f"--scan-grid {n_theta} {n_lat} {n_times}: needs at least 4 longitudes, "
            "3 latitudes (poles included) and 2 times"
        )
    if n_theta * n_lat > MAX_SCAN_POINTS:
        return (
            f"--scan-grid {n_theta} {n_lat} {n_times}: {n_theta * n_lat} points per time; "
            f"at most {MAX_SCAN_POINTS}"
        )
    return None


def scan(
    controls: Controls,
    n_theta: int = 720,
    n_lat: int = 361,
    n_times: int = 400,
    curvature: bool = True,
    progress: ProgressFn = no_progress,
    one_strip: bool = False,
) -> RegularityReport:
    """Scan the homotopy on an n_theta x n_lat grid (poles included) at n_times times.

    ``one_strip`` puts the n_theta samples on one strip period [0, 2 pi / strips) instead
    of the whole circle; the construction is exactly n-fold symmetric, so this sees the
    same surface with ``strips`` times the density.
    """
    span = 2 * np.pi / controls.strips if one_strip else 2 * np.pi
    theta = np.arange(n_theta) * (span / n_theta)
    lat_all = np.linspace(-np.pi / 2, np.pi / 2, n_lat)
    lat = lat_all[1:-1]  # poles are handled in their own chart
    times = scan_times(controls, n_times)
    ratio_t = np.empty(times.size)
    curv_t = np.zeros(times.size)
    best = (np.inf, (0.0, 0.0, 0.0))
    worst_k = (0.0, (0.0, 0.0, 0.0))
    pole_min = np.inf
    bend_t = np.zeros(theta.size)
    bend_l = np.zeros(lat.size)
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
            k, rt, rl = _curvature_and_rates(controls, float(t), theta, lat)
            np.maximum(bend_t, rt.max(axis=0), out=bend_t)
            np.maximum(bend_l, rl.max(axis=1), out=bend_l)
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
        per_strip=one_strip,
        theta=theta,
        lat=lat,
        bend_theta=bend_t if curvature else np.zeros(0),
        bend_lat=bend_l if curvature else np.zeros(0),
    )


# The fast scan every build runs (and the bend profile of the default mesh comes from).
QUICK_GRID = (48, 181, 120)  # theta per strip, latitudes (poles included), times


def quick_scan(controls: Controls, progress: ProgressFn = no_progress) -> RegularityReport:
    """The fast check every build runs, on one strip period (exact n-fold symmetry)."""
    n_theta, n_lat, n_times = QUICK_GRID
    return scan(
        controls,
        n_theta=n_theta,
        n_lat=n_lat,
        n_times=n_times,
        curvature=True,
        progress=progress,
        one_strip=True,
    )


_checked: dict[str, RegularityReport] = {}


def quick_report(controls: Controls, progress: ProgressFn = no_progress) -> RegularityReport:
    """The fast scan of these controls, run once per controls and then cached."""
    key = repr(controls.as_dict())
    rep = _checked.get(key)
    if rep is None:
        rep = quick_scan(controls, progress=progress)
        _checked[key] = rep
    return rep


def require_regular(controls: Controls, progress: ProgressFn = no_progress) -> RegularityReport:
    """Run the fast check (cached per controls) and raise RegularityError if it fails."""
    rep = quick_report(controls, progress=progress)
    i = rep.first_failure()
    if i is not None:
        t = rep.times[i]
        lo, hi = controls_range_text(controls)
        raise RegularityError(
            "controls",
            f"the homotopy is not regular enough at t={t:.4f} (normalised ratio "
            f"{rep.ratio_per_time[i]:.4g}, floor {MIN_RATIO}; curvature x radius "
            f"{rep.curvature_per_time[i]:.1f}); worst point "
            f"t={rep.min_ratio_at[0]:.4f}, theta={np.degrees(rep.min_ratio_at[1]):.1f} deg, "
            f"lat={np.degrees(rep.min_ratio_at[2]):.1f} deg. Known to pass: {lo}; {hi}",
        )
    return rep


def controls_range_text(controls: Controls) -> tuple[str, str]:
    """What the gate is known to pass, for the strip count given: (strips, depth and timing)."""
    from .controls import MAX_STRIPS, MIN_STRIPS, default_timing, depth_range

    lo, hi = depth_range()
    defaults = default_timing(controls.strips)
    custom = [n for n, w in controls.timing.items() if tuple(w) != tuple(defaults[n])]
    timing = (
        f"with the default windows (these controls change {', '.join(custom)})"
        if custom
        else "with the default windows"
    )
    return (
        f"strips {MIN_STRIPS}-{MAX_STRIPS}",
        f"for {controls.strips} strips depth {lo:g}-{hi:g} passes {timing}",
    )
