"""The tuned controls table: per strip count the depth, the windows and the frames.

``turnabout tune`` fills it in three steps, each resumable from files in its results folder:

1. depth (:func:`~turnabout.sweeps.tune.tune_windows`): the regular depth of least peak
   curvature, on the reference windows (or each combination of given windows);
2. pace (:func:`pace_figures`, one task per strip count, cached as ``pace/KEY.json``): the
   frames the reference windows need on the default mesh and, unless the windows were
   given, the windows the step-rate model says need the fewest
   (:func:`~turnabout.sweeps.pace.tune_timing`) and the frames those really need. The
   tuned windows are adopted only when they save at least a whole second;
3. figures: the quick scan of the chosen controls, as a sweep point.

The peak curvature and the smallest ratio do not depend on the windows (the shape at a time
depends only on the turn and the wave amplitude, and the windows only reparametrise time;
docs/sweeps.md, section 3), so the windows are free to serve the frames.

The table (:func:`table_bytes`) is the file ``turnabout.eversion`` reads its documented
defaults from (``tuned_controls.json``): JSON with sorted keys and floats as their shortest
exact repr, so the same command gives the same bytes.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Sequence
from pathlib import Path

from .. import cluster
from ..eversion.controls import STAGE_NAMES, Controls, TunedTableError, parse_tuned_table
from ..eversion.regularity import MIN_RATIO
from ..eversion.spacing import mesh_for
from ..output import atomic_write_bytes
from ..progress import ProgressFn, no_progress
from . import pace
from .grid import ScanSpec
from .tune import REFERENCE_TIMING, TuneResult

TABLE_FORMAT = "turnabout tuned controls, version 1"
PACE_VERSION = 2  # part of a pace record: a change of the method makes old files stale
MODEL_SAMPLES = 401  # turns at which the step-rate model samples the shape
QUICK_FIGURES = (
    "min_ratio", "min_ratio_t", "min_ratio_theta_deg", "min_ratio_lat_deg", "pole_min_ratio",
    "max_curvature", "max_curvature_t", "max_curvature_theta_deg", "max_curvature_lat_deg",
)  # fmt: skip


def _dumps(obj) -> bytes:
    return (json.dumps(obj, indent=1, sort_keys=True, allow_nan=False) + "\n").encode()


def _timing_lists(timing: dict) -> dict:
    return {s: [float(timing[s][0]), float(timing[s][1])] for s in STAGE_NAMES}


def pace_record(
    strips: int, depth: float, timing: dict, tune_windows: bool, frames_at: int | None = None
) -> dict:
    """What a pace task computes from: plain data (its hash names the cache file).
    ``frames_at``: also the largest step at this frame count with ``timing`` (a kept entry)."""
    return {
        "strips": int(strips),
        "depth": float(depth),
        "timing": _timing_lists(timing),
        "tune_windows": bool(tune_windows),
        "frames_at": frames_at,
        "step_limit": pace.STEP_LIMIT,
        "fps": pace.FPS,
        "model_samples": MODEL_SAMPLES,
        "version": PACE_VERSION,
    }


def pace_key(record: dict) -> str:
    text = json.dumps(record, sort_keys=True, separators=(",", ":"))
    return hashlib.sha256(text.encode()).hexdigest()[:16]


def pace_figures(record: dict) -> dict:
    """Frames for the record's windows, and for model-tuned windows when asked.

    A plain function of plain data (runs on any worker). Returns ``reference`` (frames,
    largest_step, model_rate) and ``tuned`` (the same plus timing, or None when the windows
    were given or the model found none better), ``adopted`` (the tuned windows save at
    least one whole second) and ``at`` (the largest step at ``frames_at``, or None).
    """
    windows = {s: tuple(w) for s, w in record["timing"].items()}
    c0 = Controls(strips=record["strips"], depth=record["depth"], timing=windows)
    m0 = mesh_for(c0)
    model = pace.pace_model(c0, m0, samples=record["model_samples"])
    grid = pace.model_times()
    rate0 = float(model.rate(c0.timing, grid).max())
    r0 = pace.frames_needed(c0, m0, guess=round(rate0 / pace.STEP_LIMIT + 1))
    ref = {"frames": r0.frames, "largest_step": r0.largest, "model_rate": rate0}
    tuned = None
    if record["tune_windows"]:
        timing1, rate1 = pace.tune_timing(model, c0.timing)
        if timing1 != c0.timing:
            c1 = c0.with_changes(timing=timing1)
            r1 = pace.frames_needed(c1, mesh_for(c1), guess=round(rate1 / pace.STEP_LIMIT + 1))
            tuned = {"timing": _timing_lists(timing1), "frames": r1.frames,
                     "largest_step": r1.largest, "model_rate": rate1}  # fmt: skip
    adopted = tuned is not None and tuned["frames"] <= r0.frames - pace.FPS
    at = None
    if record["frames_at"] is not None:
        at = {"frames": record["frames_at"],
              "largest_step": pace.largest_step(c0, record["frames_at"], m0).largest}  # fmt: skip
    return {"reference": ref, "tuned": tuned, "adopted": adopted, "at": at}


def run_pace(
    records: Sequence[dict],
    folder: Path,
    workers: int = 1,
    client=None,
    retries: int = 3,
    progress: ProgressFn = no_progress,
) -> list[dict]:
    """:func:`pace_figures` of every record not already in ``folder/pace``; in order."""
    where = Path(folder) / "pace"
    where.mkdir(parents=True, exist_ok=True)
    keys = [pace_key(r) for r in records]
    out: list[dict | None] = []
    for k, r in zip(keys, records, strict=True):
        path = where / f"{k}.json"
        try:
            data = json.loads(path.read_text(encoding="utf-8"))
            ok = isinstance(data, dict) and data.get("record") == r
            out.append(data["figures"] if ok and isinstance(data.get("figures"), dict) else None)
        except (OSError, ValueError, KeyError):
            out.append(None)
    todo = [i for i, f in enumerate(out) if f is None]
    done = len(records) - len(todo)
    progress(done, len(records))
    items = [(records[i],) for i in todo]
    task_keys = [f"turnabout-pace-{keys[i]}" for i in todo]
    for j, figs in cluster.run_tasks(pace_figures, items, workers, client, retries, task_keys):
        i = todo[j]
        data = {"key": keys[i], "record": records[i], "figures": figs}
        atomic_write_bytes(where / f"{keys[i]}.json", _dumps(data))
        out[i] = figs
        done += 1
        progress(done, len(records))
    return [f for f in out if f is not None]


def chosen_controls(result: TuneResult, paced: dict, kept: dict | None) -> Controls:
    """The controls an entry documents: the kept entry's (its pace ran on them), else the
    tuned depth with the adopted windows (or the reference ones)."""
    if kept is not None:
        return Controls(strips=result.strips, depth=kept["depth"],
                        timing={s: tuple(w) for s, w in kept["timing"].items()})  # fmt: skip
    timing = paced["tuned"]["timing"] if paced["adopted"] else result.timing
    return Controls(strips=result.strips, depth=result.depth,
                    timing={s: tuple(w) for s, w in timing.items()})  # fmt: skip


def entry(result: TuneResult, paced: dict, figures: dict, kept: dict | None) -> dict:
    """One strip count's row of the table (``kept``: the previous table's entry, whose
    depth, windows and frames are kept; the tuner's own choice is recorded beside)."""
    choice = paced["tuned"] if paced["adopted"] else paced["reference"]
    found = {
        "depth": result.depth,
        "depths_tried": len(result.tried),
        "reference_windows": {
            k: paced["reference"][k] for k in ("frames", "largest_step", "model_rate")
        },
        "tuned_windows": paced["tuned"],
        "windows": "tuned" if paced["adopted"] else "reference",
        "frames": choice["frames"],
    }
    c = chosen_controls(result, paced, kept)
    row = {
        "depth": c.wave_depth,
        "timing": _timing_lists(c.timing),
        "frames": kept["frames"] if kept is not None else choice["frames"],
        "quick_scan": {k: figures[k] for k in QUICK_FIGURES},
        "tuner": found,
        "kept": kept is not None,
    }
    row["largest_step"] = paced["at"]["largest_step"] if kept is not None else choice[
        "largest_step"]  # fmt: skip
    return row


def table(entries: dict[int, dict], spec: ScanSpec, command: str) -> dict:
    return {
        "format": TABLE_FORMAT,
        "command": command,
        "objective": (
            "depth: the smallest peak curvature x radius with a min normalised ratio >= "
            f"{MIN_RATIO:g} on the scan below; windows: the fewest frames (a tuned set "
            f"replaces the reference windows when it saves at least {pace.FPS} frames); "
            f"frames: the smallest multiple of {pace.FPS} whose largest step (move / local "
            f"edge length per frame, default mesh) is at most {pace.STEP_LIMIT:g}"
        ),
        "min_ratio_floor": MIN_RATIO,
        "reference_timing": _timing_lists(REFERENCE_TIMING),
        "scan": spec.as_dict(),
        "step_limit": pace.STEP_LIMIT,
        "fps": pace.FPS,
        "strips": {str(n): e for n, e in sorted(entries.items())},
    }


def table_bytes(data: dict) -> bytes:
    """The table file's bytes; checked to load as the controls' defaults would."""
    raw = _dumps(data)
    if len(data["strips"]) == 9:  # a whole table: the eversion's own loader must accept it
        parse_tuned_table(raw.decode(), "the tuned table")
    return raw


def read_kept(path: Path, counts: Sequence[int]) -> dict[int, dict]:
    """Entries to keep from an existing table file (depth, timing, frames); raises
    TunedTableError naming the file when it cannot give them."""
    if not counts:
        return {}
    try:
        text = Path(path).read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise TunedTableError(f"--keep: needs the existing table {path} ({exc})") from None
    parse_tuned_table(text, str(path))
    rows = json.loads(text)["strips"]
    return {n: {k: rows[str(n)][k] for k in ("depth", "timing", "frames")} for n in counts}
