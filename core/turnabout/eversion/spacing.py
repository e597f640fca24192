"""Where the eversion's mesh puts its vertices.

One mesh serves every frame (the vertices keep their (theta, lat) for the whole motion), so
its spacing answers to the worst bend over time. The fast regularity scan records, for
every theta of one strip and every latitude, how fast the unit normal turns per unit of
that parameter at worst over the whole motion (``RegularityReport.bend_theta`` and
``bend_lat``, radians per radian). Two faces across an edge of parameter length h then meet
at about rate x h, so the *bend* spacing gives each edge

    h(x) = CREASE_AIM / sqrt(rate(x)^2 + ROUND_RATE^2)

(the floor keeps the round parts, rate 1, at CREASE_AIM / ROUND_RATE), limited so that
neighbouring edges differ by at most a factor 1 + GRADING, and places the samples by
equidistributing 1 / h. Longitude samples are the same in every strip, so the mesh keeps
the n-fold symmetry exactly. The default counts are the ones that meet the aim; asked-for
counts keep the same distribution, scaled.

The *even* spacing is the plain (theta, lat) grid, for textures that want square cells.
"""

from __future__ import annotations

import math

import numpy as np

from ..mesh import SphereMesh, uniform_sphere_mesh
from .controls import ControlError, Controls
from .regularity import RegularityReport, require_regular

SPACINGS = ("bend", "even")
CREASE_AIM_DEG = 18.0  # aimed angle between the normals of two faces across one edge
ROUND_RATE = 4.5  # rate floor: round parts get edges of CREASE_AIM / 4.5 (4 degrees)
GRADING = 0.15  # neighbouring edges differ by at most about 15 %
EVEN_PER_STRIP = 32
EVEN_RINGS = 127
MIN_SAMPLES_PER_WAVE = 8
MIN_LAT_RINGS = 16
MAX_VERTICES = 4_000_000


def _integer(name: str, v) -> None:
    if isinstance(v, bool) or not isinstance(v, (int, np.integer)):
        raise ControlError(name, f"must be an integer, got {v!r}")


def check_lon(controls: Controls, n_lon) -> None:
    _integer("lon", n_lon)
    need = MIN_SAMPLES_PER_WAVE * controls.strips
    top = MAX_VERTICES // MIN_LAT_RINGS
    if n_lon > top:
        raise ControlError("lon", f"must be at most {top}, got {n_lon}")
    if n_lon < need or n_lon % controls.strips:
        raise ControlError(
            "lon",
            f"must be a multiple of strips ({controls.strips}) and at least {need} "
            f"({MIN_SAMPLES_PER_WAVE} samples per wave), got {n_lon}",
        )


def check_lat(controls: Controls, n_lat) -> None:
    _integer("lat", n_lat)
    if n_lat < MIN_LAT_RINGS:
        raise ControlError("lat", f"must be at least {MIN_LAT_RINGS}, got {n_lat}")
    top = MAX_VERTICES // (MIN_SAMPLES_PER_WAVE * controls.strips)
    if n_lat > top:
        raise ControlError("lat", f"must be at most {top}, got {n_lat}")


def check_resolution(controls: Controls, n_lon: int, n_lat: int) -> None:
    """Refuse meshes too coarse for the waves or too large to hold."""
    check_lon(controls, n_lon)
    check_lat(controls, n_lat)
    if n_lon * n_lat + 2 > MAX_VERTICES:
        raise ControlError(
            "lon x lat",
            f"{n_lon} x {n_lat} gives {n_lon * n_lat + 2} vertices; at most {MAX_VERTICES}",
        )


def _limit_growth(h: np.ndarray, x: np.ndarray, slope: float) -> np.ndarray:
    """The largest function <= h whose slope is at most ``slope`` (lower Lipschitz envelope)."""
    fwd = slope * x + np.minimum.accumulate(h - slope * x)
    bwd = -slope * x + np.minimum.accumulate((h + slope * x)[::-1])[::-1]
    return np.minimum(fwd, bwd)


def edge_lengths(rate: np.ndarray, x: np.ndarray, periodic: float | None = None) -> np.ndarray:
    """Aimed parameter edge length h(x) on the samples x from the bend rate there.

    ``periodic`` is the period when x samples one period of a periodic profile.
    """
    aim = math.radians(CREASE_AIM_DEG)
    h = aim / np.sqrt(rate * rate + ROUND_RATE * ROUND_RATE)
    if periodic is None:
        return _limit_growth(h, x, GRADING)
    xx = np.concatenate([x - periodic, x, x + periodic])
    return _limit_growth(np.tile(h, 3), xx, GRADING)[x.size : 2 * x.size]


REFINE = 16  # sub-samples per profile interval when integrating 1 / h


def _equidistribute(x: np.ndarray, h: np.ndarray, count: int | None, skip_ends: bool):
    """Sample positions on [x[0], x[-1]] with spacing proportional to h (linear between nodes).

    count : number of intervals (None: as many as make every spacing at most h);
    returns count + 1 positions from x[0] to x[-1], or count - 1 inner ones with skip_ends.
    """
    fine = np.linspace(0.0, x.size - 1.0, (x.size - 1) * REFINE + 1)
    xf = np.interp(fine, np.arange(x.size), x)
    density = 1.0 / np.interp(fine, np.arange(x.size), h)
    steps = 0.5 * (density[1:] + density[:-1]) * np.diff(xf)
    cum = np.concatenate([[0.0], np.cumsum(steps)])
    count = count or math.ceil(cum[-1])
    levels = np.arange(count + 1) * (cum[-1] / count)
    out = np.interp(levels, cum, xf)
    return out[1:-1] if skip_ends else out


def theta_samples(rep: RegularityReport, strips: int, per_strip: int | None) -> np.ndarray:
    """Longitudes of one strip [0, 2 pi / strips), starting at 0, equidistributing 1 / h."""
    period = 2 * np.pi / strips
    x = np.concatenate([rep.theta, [period]])
    h = edge_lengths(rep.bend_theta, rep.theta, periodic=period)
    return _equidistribute(x, np.concatenate([h, h[:1]]), per_strip, skip_ends=False)[:-1]


def lat_samples(rep: RegularityReport, rings: int | None) -> np.ndarray:
    """Latitudes of the rings, south to north (poles excluded), equidistributing 1 / h."""
    h = edge_lengths(rep.bend_lat, rep.lat)
    x = np.concatenate([[-np.pi / 2], rep.lat, [np.pi / 2]])
    h = np.concatenate([h[:1], h, h[-1:]])
    return _equidistribute(x, h, rings + 1 if rings else None, skip_ends=True)


def mesh_for(
    controls: Controls,
    n_lon: int | None = None,
    n_lat: int | None = None,
    spacing: str = "bend",
) -> SphereMesh:
    """The eversion's sphere mesh, its counts checked before anything is sampled.

    n_lon : longitude samples (a multiple of strips) or None for the default;
    n_lat : latitude rings between the poles, or None for the default;
    spacing : "bend" (default: vertices where the surface bends, as many as keep the angle
        between neighbouring faces near CREASE_AIM_DEG in every frame, from the fast scan,
        which it runs if it has not run yet, refusing controls that fail it) or "even"
        (32 per strip x 127 rings by default).
    """
    if spacing not in SPACINGS:
        raise ControlError("spacing", f"must be one of {', '.join(SPACINGS)}, got {spacing!r}")
    if n_lon is not None and n_lat is not None:
        check_resolution(controls, n_lon, n_lat)
    elif n_lon is not None:
        check_lon(controls, n_lon)
    elif n_lat is not None:
        check_lat(controls, n_lat)
    n = controls.strips
    if spacing == "even":
        mesh = uniform_sphere_mesh(n_lon or EVEN_PER_STRIP * n, n_lat or EVEN_RINGS)
    else:
        rep = require_regular(controls)
        one = theta_samples(rep, n, n_lon // n if n_lon else None)
        theta = (one[None, :] + (2 * np.pi / n) * np.arange(n)[:, None]).ravel()
        mesh = SphereMesh(theta=theta, lat=lat_samples(rep, n_lat))
    check_resolution(controls, mesh.n_lon, mesh.n_lat)  # the default counts too
    return mesh
