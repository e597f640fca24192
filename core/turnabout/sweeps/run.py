"""Running a sweep: one regularity scan per point, on a local pool or a Dask cluster.

A sweep's folder holds ``points/KEY.json``, one small file per finished point (written
atomically by the coordinating process as each result arrives), and the tables assembled
from them, ``sweep.csv`` and ``sweep.json``, in the grid's order. A point whose file is
already there (same key, same record) is not computed again, so an interrupted sweep
resumes where it stopped, and every worker count or cluster gives the same bytes: each
point is one pure function of its controls and scan grid, run whole on one worker.

Figures of a point (from :func:`~turnabout.eversion.regularity.scan`): the minimum
normalised ratio with its time, longitude and latitude (degrees); the poles' minimum; the
largest principal curvature x radius with its time, longitude and latitude; the documented
frames of the strip count (``default_frames``, from the tuned table); with a spec's
``frames_needed``, the frames this point's own default mesh needs so that no vertex moves
more than one local edge length per frame (the checker's step criterion; whole seconds at
24 fps, measured on the baked frames by :func:`~turnabout.sweeps.pace.frames_needed`) and
that largest step, or None for a point that fails (the tuned table keeps a margin: 0.95);
the verdict, ``regular`` when the ratio is at least
:data:`~turnabout.eversion.regularity.MIN_RATIO`, else ``fails``.
"""

from __future__ import annotations

import csv
import io
import json
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path

from .. import cluster
from ..eversion.controls import STAGE_NAMES, Controls, default_frames
from ..eversion.regularity import MIN_RATIO, scan
from ..output import atomic_write_bytes
from ..progress import ProgressFn, no_progress
from .grid import ScanSpec, point_key, point_record

MAX_POINT_FILE = 100_000  # bytes; a point's file is about 1 kB

FIGURES = (
    "min_ratio", "min_ratio_t", "min_ratio_theta_deg", "min_ratio_lat_deg", "pole_min_ratio",
    "max_curvature", "max_curvature_t", "max_curvature_theta_deg", "max_curvature_lat_deg",
    "default_frames", "frames_needed", "frames_needed_step", "verdict",
)  # fmt: skip
CSV_COLUMNS = (
    "key", "strips", "depth",
    *(f"{s}_{e}" for s in STAGE_NAMES for e in ("start", "end")),
    *FIGURES,
)  # fmt: skip


def point_figures(record: dict) -> dict:
    """Scan one point (a :func:`~turnabout.sweeps.grid.point_record`) and return its figures.

    A plain function of plain data, so it can run in any process or on any Dask worker.
    """
    timing = {s: tuple(w) for s, w in record["timing"].items()}
    controls = Controls(strips=record["strips"], depth=record["depth"], timing=timing)
    nt, nl, ns = record["scan"]["grid"]
    rep = scan(controls, n_theta=nt, n_lat=nl, n_times=ns, curvature=True,
               one_strip=record["scan"]["kind"] == "quick")  # fmt: skip
    t, th, la = rep.min_ratio_at
    tc, thc, lac = rep.max_curvature_at
    regular = bool(rep.min_ratio >= MIN_RATIO)
    frames = step = None
    if record["scan"].get("frames_needed") and regular:
        from ..eversion import mesh_for
        from .pace import frames_needed

        paced = frames_needed(
            controls, mesh_for(controls), guess=default_frames(controls.strips), limit=1.0
        )
        frames, step = paced.frames, paced.largest
    return {
        "min_ratio": float(rep.min_ratio),
        "min_ratio_t": float(t),
        "min_ratio_theta_deg": math.degrees(th),
        "min_ratio_lat_deg": math.degrees(la),
        "pole_min_ratio": float(rep.pole_min_ratio),
        "max_curvature": float(rep.max_curvature),
        "max_curvature_t": float(tc),
        "max_curvature_theta_deg": math.degrees(thc),
        "max_curvature_lat_deg": math.degrees(lac),
        "default_frames": default_frames(controls.strips),
        "frames_needed": frames,
        "frames_needed_step": step,
        "verdict": "regular" if regular else "fails",
    }


def _dumps(obj) -> bytes:
    return (json.dumps(obj, indent=1, sort_keys=True, allow_nan=False) + "\n").encode()


def point_path(folder: Path, key: str) -> Path:
    return Path(folder) / "points" / f"{key}.json"


def read_point(folder: Path, key: str, record: dict) -> dict | None:
    """The figures stored for a point, or None when its file is missing, unreadable, too
    large, or for another record (it is then computed again and overwritten)."""
    path = point_path(folder, key)
    try:
        if path.stat().st_size > MAX_POINT_FILE:
            return None
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError, UnicodeDecodeError):
        return None
    if not isinstance(data, dict) or data.get("key") != key or data.get("point") != record:
        return None
    figs = data.get("figures")
    if not isinstance(figs, dict) or set(figs) != set(FIGURES):
        return None
    return figs


def write_point(folder: Path, key: str, record: dict, figures: dict) -> None:
    path = point_path(folder, key)
    path.parent.mkdir(exist_ok=True)
    atomic_write_bytes(path, _dumps({"key": key, "point": record, "figures": figures}))


@dataclass
class SweepResult:
    """The points in grid order with their figures, and which were computed in this run."""

    spec: ScanSpec
    keys: list[str]
    records: list[dict]
    figures: list[dict]
    computed: list[str] = field(default_factory=list)  # keys scanned in this run
    reused: list[str] = field(default_factory=list)  # keys found on disk

    def rows(self) -> list[dict]:
        out = []
        for key, rec, fig in zip(self.keys, self.records, self.figures, strict=True):
            row = {"key": key, "strips": rec["strips"], "depth": rec["depth"]}
            for s in STAGE_NAMES:
                row[f"{s}_start"], row[f"{s}_end"] = rec["timing"][s]
            row.update(fig)
            out.append(row)
        return out


def run_sweep(
    points: Sequence[Controls],
    spec: ScanSpec,
    folder: Path,
    workers: int = 1,
    client=None,
    retries: int = 3,
    progress: ProgressFn = no_progress,
    on_result: Callable[[str], None] | None = None,
) -> SweepResult:
    """Scan every point not already in ``folder``; return all figures in the points' order.

    client : a dask.distributed Client (one task per missing point, each with ``retries``),
        or None for a local pool of ``workers`` processes (1: in this process).
    on_result(key) is called after each new point's file is written.
    """
    folder = Path(folder)
    (folder / "points").mkdir(parents=True, exist_ok=True)
    keys = [point_key(c, spec) for c in points]
    records = [point_record(c, spec) for c in points]
    figures: list[dict | None] = [
        read_point(folder, k, r) for k, r in zip(keys, records, strict=True)
    ]
    result = SweepResult(spec, keys, records, [])
    todo = [i for i, f in enumerate(figures) if f is None]
    result.reused = [keys[i] for i, f in enumerate(figures) if f is not None]
    total, done = len(points), len(points) - len(todo)
    progress(done, total)
    items = [(records[i],) for i in todo]
    task_keys = [f"turnabout-point-{keys[i]}" for i in todo]
    for j, figs in cluster.run_tasks(point_figures, items, workers, client, retries, task_keys):
        i = todo[j]
        write_point(folder, keys[i], records[i], figs)
        figures[i] = figs
        result.computed.append(keys[i])
        done += 1
        if on_result is not None:
            on_result(keys[i])
        progress(done, total)
    result.figures = [f for f in figures if f is not None]
    return result


def _cell(v) -> str:
    if v is None:
        return ""
    return repr(v) if isinstance(v, float) else str(v)


def table_csv(result: SweepResult) -> bytes:
    """The sweep as CSV (floats as their shortest exact repr), one row per point in order."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_COLUMNS)
    for row in result.rows():
        w.writerow([_cell(row[c]) for c in CSV_COLUMNS])
    return buf.getvalue().encode()


def table_json(result: SweepResult) -> bytes:
    return _dumps(
        {
            "scan": result.spec.as_dict(),
            "min_ratio_floor": MIN_RATIO,
            "points": result.rows(),
        }
    )


def write_tables(result: SweepResult, folder: Path) -> tuple[Path, Path]:
    """Write ``sweep.csv`` and ``sweep.json`` into ``folder``; returns their paths."""
    folder = Path(folder)
    csv_path, json_path = folder / "sweep.csv", folder / "sweep.json"
    atomic_write_bytes(csv_path, table_csv(result))
    atomic_write_bytes(json_path, table_json(result))
    return csv_path, json_path
