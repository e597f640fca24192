"""Auto-tune: the depth that minimises the peak curvature while the ratio stays regular.

For one strip count (the windows fixed: the reference windows of :mod:`.pace` unless
given), :func:`tune_depth` sweeps ``coarse`` depths
evenly over :func:`~turnabout.eversion.depth_range`, keeps the regular point (ratio at least
the floor) with the smallest peak curvature x radius, and sweeps again between that
point's neighbours, ``rounds`` times (not when the best is an end of the allowed range:
the search stops there and reports that end). :func:`tune_windows` runs it for every
combination of given stage windows and keeps the best. Every round is an ordinary sweep in
the same folder, so repeated depths are read back, not scanned again, and an interrupted
tune resumes.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..eversion.controls import Controls, depth_range
from ..eversion.regularity import MIN_RATIO
from .grid import ScanSpec
from .pace import REFERENCE_TIMING
from .run import run_sweep

DEPTH_DIGITS = 6  # depths are rounded to a micro-radius, so a depth's key is stable


@dataclass
class TuneResult:
    """The best regular depth for a strip count (None when no depth tried was regular),
    its figures, and every (depth, min_ratio, max_curvature) tried, sorted by depth."""

    strips: int
    depth: float | None
    figures: dict | None
    tried: list[tuple[float, float, float]]
    computed: int  # points scanned in this run (the rest were on disk)
    timing: dict | None = None  # the stage windows of the result


def _best(tried: dict[float, dict]) -> float | None:
    ok = [(f["max_curvature"], d) for d, f in tried.items() if f["min_ratio"] >= MIN_RATIO]
    return min(ok)[1] if ok else None


def tune_depth(
    strips: int,
    spec: ScanSpec,
    folder: Path,
    coarse: int = 7,
    rounds: int = 2,
    timing: dict | None = None,
    **run_options,
) -> TuneResult:
    """Search depth for ``strips`` (see the module's docstring); ``run_options`` go to
    :func:`~turnabout.sweeps.run.run_sweep` (workers, client, retries, progress)."""
    base = Controls(strips=strips, timing=dict(timing or REFERENCE_TIMING))
    lo, hi = depth_range()
    tried: dict[float, dict] = {}
    computed = 0
    span = (lo, hi)
    for _ in range(rounds + 1):
        depths = sorted({round(float(d), DEPTH_DIGITS) for d in np.linspace(*span, coarse)})
        pts = [base.with_changes(depth=d) for d in depths]
        res = run_sweep(pts, spec, folder, **run_options)
        computed += len(res.computed)
        for c, f in zip(pts, res.figures, strict=True):
            tried[c.wave_depth] = f
        best = _best(tried)
        if best is None:
            break
        if best in (lo, hi):  # the optimum is the allowed range's end: nothing to refine
            break
        ds = sorted(tried)
        k = ds.index(best)
        span = (ds[max(k - 1, 0)], ds[min(k + 1, len(ds) - 1)])
        if span[1] - span[0] < 2 * 10.0**-DEPTH_DIGITS:
            break
    best = _best(tried)
    rows = [(d, tried[d]["min_ratio"], tried[d]["max_curvature"]) for d in sorted(tried)]
    return TuneResult(strips, best, tried.get(best) if best is not None else None, rows, computed,
                      dict(base.timing))  # fmt: skip


def tune_windows(
    strips: int,
    spec: ScanSpec,
    folder: Path,
    windows: dict[str, list[tuple[float, float]]],
    **options,
) -> TuneResult:
    """:func:`tune_depth` for every combination of the given stage windows (the others at
    their defaults); the result with the smallest peak curvature wins (ties: the first in
    the order given). ``tried`` and ``computed`` add up over every combination."""
    names = [s for s in windows if windows[s]]
    best: TuneResult | None = None
    tried, computed = [], 0
    for combo in itertools.product(*(windows[s] for s in names)):
        timing = {**REFERENCE_TIMING, **dict(zip(names, combo, strict=True))}
        r = tune_depth(strips, spec, folder, timing=timing, **options)
        tried += r.tried
        computed += r.computed
        if r.depth is not None and (
            best is None or r.figures["max_curvature"] < best.figures["max_curvature"]
        ):
            best = r
    if best is None:
        return TuneResult(strips, None, None, tried, computed, None)
    best.tried, best.computed = tried, computed
    return best
