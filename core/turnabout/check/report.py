"""Check reports: per-frame records, the animation verdict, JSON / CSV / PNG output.

The JSON schema is documented in docs/checker.md. Non-finite numbers are written as null.
"""

from __future__ import annotations

import csv
import io
import json
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from .roundness import EversionCheck
from .singular import SingularPoint
from .thresholds import Thresholds

if TYPE_CHECKING:  # pragma: no cover
    from .intersections import IntersectionResult
    from .topology import MeshTopology, TopologyReport

SCHEMA = "turnabout.check/1"

# per-frame numeric columns, in table / CSV order
TABLE_COLUMNS = (
    "frame",
    "time",
    "degree",
    "signed_volume",
    "triple_point_count",
    "double_curve_count",
    "singular_point_count",
    "max_crease_deg",
    "max_crease_concentration",
    "min_area_ratio",
    "min_quality_ratio",
    "min_fold",
    "min_bend_radius",
    "max_step",
    "max_severity",
    "level_signed_count",
    "dome_count",
    "bowl_count",
    "saddle_count",
)

VERDICTS = ("ok", "warn", "fail")
# Findings come at three levels: a fail or a warning decides the verdict; a note is a true
# fact of the surface or of its sampling (points where 4 or 8 sheets meet on a symmetry
# axis, triple points on mesh edges) and leaves the verdict alone.
LEVELS = ("note", "warn", "fail")


def report_paths(
    folder: str, object_name: str, blend_file: str = "", stem: str | None = None
) -> tuple[str, str]:
    """JSON and PNG report paths of a checked object: ``<stem>_<object>_check.json`` / ``.png``
    in ``folder``, the stem being the .blend's name ("untitled" when never saved)."""
    from ..output import safe_file_name

    stem = stem or os.path.splitext(os.path.basename(blend_file))[0] or "untitled"
    base = os.path.join(folder, f"{stem}_{safe_file_name(object_name)}_check")
    return base + ".json", base + ".png"


def cause_of(finding: str) -> str:
    """The cause of a reason or note: the words before its first colon ("crease", ...)."""
    return finding.split(":", 1)[0].strip()


def _clean(x: Any) -> Any:
    """JSON-safe copy: numpy scalars to Python, non-finite floats to None."""
    if isinstance(x, dict):
        return {k: _clean(v) for k, v in x.items()}
    if isinstance(x, list | tuple):
        return [_clean(v) for v in x]
    if isinstance(x, np.ndarray):
        return _clean(x.tolist())
    if isinstance(x, np.bool_ | bool):
        return bool(x)
    if isinstance(x, np.integer):
        return int(x)
    if isinstance(x, float | np.floating):
        x = float(x)
        return x if np.isfinite(x) else None
    return x


@dataclass
class FrameReport:
    """Verdict and figures of one frame."""

    frame: int
    verdict: str
    reasons: list[str]
    degree: float
    signed_volume: float
    triple_point_count: int
    double_curve_count: int
    singular_point_count: int
    max_crease_deg: float
    min_area_ratio: float
    max_step: float
    worst_element: dict  # {"kind": face|edge|vertex, "index": int, "metric": str}
    worst_position: tuple[float, float, float]
    time: float = float("nan")
    max_crease_concentration: float = 0.0
    min_quality_ratio: float = 1.0
    min_fold: float = 1.0
    min_bend_radius: float = float("inf")
    max_severity: float = 0.0
    area: float = 0.0
    size: float = 0.0
    singular_points: list[SingularPoint] = field(default_factory=list)
    triple_points: np.ndarray = field(default_factory=lambda: np.zeros((0, 3)))
    double_curves_closed: list[bool] = field(default_factory=list)
    degenerate_pairs: int = 0
    # level points (views.levels): None unless computed (closed orientable manifolds)
    level_signed_count: int | None = None
    dome_count: int | None = None
    bowl_count: int | None = None
    saddle_count: int | None = None
    notes: list[str] = field(default_factory=list)
    fail_count: int = 0  # the first fail_count reasons are failures, the rest warnings

    def to_dict(self) -> dict:
        return _clean(
            {
                "frame": self.frame,
                "time": self.time,
                "verdict": self.verdict,
                "reasons": list(self.reasons),
                "degree": self.degree,
                "signed_volume": self.signed_volume,
                "triple_point_count": self.triple_point_count,
                "double_curve_count": self.double_curve_count,
                "singular_point_count": self.singular_point_count,
                "max_crease_deg": self.max_crease_deg,
                "max_crease_concentration": self.max_crease_concentration,
                "min_area_ratio": self.min_area_ratio,
                "min_quality_ratio": self.min_quality_ratio,
                "min_fold": self.min_fold,
                "min_bend_radius": self.min_bend_radius,
                "max_step": self.max_step,
                "max_severity": self.max_severity,
                "area": self.area,
                "size": self.size,
                "worst_element": dict(self.worst_element),
                "worst_position": list(self.worst_position),
                "singular_points": [s.to_dict() for s in self.singular_points],
                "triple_points": np.asarray(self.triple_points).tolist(),
                "double_curves_closed": list(self.double_curves_closed),
                "degenerate_pairs": self.degenerate_pairs,
                "level_signed_count": self.level_signed_count,
                "dome_count": self.dome_count,
                "bowl_count": self.bowl_count,
                "saddle_count": self.saddle_count,
                "notes": list(self.notes),
            }
        )


@dataclass
class AnimationReport:
    """The result of :func:`turnabout.check.check_animation`."""

    verdict: str
    everted: bool
    frames: list[FrameReport]
    topology: TopologyReport
    thresholds: Thresholds
    eversion: EversionCheck | None
    reasons: list[str]
    intersections_checked: bool
    # QuadruplePoints when check_animation(quadruple=True) looked for them, else None
    quadruple_points: Any = None
    # kept to recompute per-element data on demand (heat maps, curves)
    _positions: np.ndarray | None = field(repr=False, default=None)
    _topo: MeshTopology | None = field(repr=False, default=None)
    _intersections: dict[int, IntersectionResult] = field(repr=False, default_factory=dict)
    _orientable: bool = field(repr=False, default=True)
    level_up: tuple[float, float, float] | None = None  # unit up of the level points

    def failing_frames(self) -> list[int]:
        """Indices of the frames whose verdict is "fail"."""
        return [f.frame for f in self.frames if f.verdict == "fail"]

    def warning_frames(self) -> list[int]:
        return [f.frame for f in self.frames if f.verdict == "warn"]

    def noted_frames(self) -> list[int]:
        """Indices of the frames with notes (whatever their verdict)."""
        return [f.frame for f in self.frames if f.notes]

    def causes(self, level: str) -> dict[str, int]:
        """Frames per cause at one level ("fail", "warn" or "note"), most frequent first.

        A frame's reasons list its failures first (``fail_count`` of them), then its
        warnings; each cause counts once per frame.
        """
        if level not in LEVELS:
            raise ValueError(f"level must be one of {LEVELS}, got {level!r}")
        count: dict[str, int] = {}
        for f in self.frames:
            if level == "note":
                found = f.notes
            else:
                fails = f.reasons[: f.fail_count]
                found = fails if level == "fail" else f.reasons[len(fails) :]
            for cause in dict.fromkeys(cause_of(r) for r in found):
                count[cause] = count.get(cause, 0) + 1
        return dict(sorted(count.items(), key=lambda kv: (-kv[1], kv[0])))

    def summary_lines(self, shown: int = 20) -> list[str]:
        """The console summary: frame counts and causes per level, and the orientation."""
        lines = [f"  {r}" for r in self.reasons]
        n = len(self.frames)
        for level, frames in (
            ("fail", self.failing_frames()),
            ("warn", self.warning_frames()),
            ("note", self.noted_frames()),
        ):
            if not frames:
                continue
            word = {"fail": "failing", "warn": "warning", "note": "noted"}[level]
            causes = ", ".join(f"{c} {k}" for c, k in self.causes(level).items())
            listed = ", ".join(str(f) for f in frames[:shown]) + (
                " ..." if len(frames) > shown else ""
            )
            lines.append(f"  {word} frames: {len(frames)} of {n} ({causes}): {listed}")
        if self.failing_frames():
            worst = self.frames[self.worst_frame]
            x, y, z = worst.worst_position
            lines.append(
                f"  worst frame {worst.frame}: {worst.reasons[0] if worst.reasons else ''} "
                f"near ({x:.4g}, {y:.4g}, {z:.4g})"
            )
        lines.append(f"  orientation: {self.orientation_summary()}")
        return lines

    def orientation_summary(self) -> str:
        """One line on the orientation: of the first and last frames, and whether reversed."""
        if not self.frames:
            return "no frames"
        v0, v1 = self.frames[0].signed_volume, self.frames[-1].signed_volume
        if not (np.isfinite(v0) and np.isfinite(v1)):
            return "none (the surface is not orientable)"

        def side(v: float) -> str:
            return "outward" if v > 0 else ("inward" if v < 0 else "flat (zero volume)")

        text = f"first frame {side(v0)} (volume {v0:.4g}), last frame {side(v1)} ({v1:.4g})"
        if len(self.frames) > 1 and v0 * v1 < 0:
            text += ": reversed"
        elif len(self.frames) > 1 and v0 * v1 > 0:
            text += ": not reversed"
        return text

    @property
    def worst_frame(self) -> int:
        """The frame with the highest severity (the first one on ties)."""
        sev = np.array([f.max_severity for f in self.frames])
        rank = np.array([VERDICTS.index(f.verdict) for f in self.frames])
        return int(np.lexsort((-sev, -rank))[0]) if len(self.frames) else 0

    def metrics_table(self) -> dict[str, np.ndarray]:
        """Per-frame columns (the JSON per-frame fields): numbers as float64/int64, and
        ``verdict`` as a string array; level-point columns only when they were computed."""
        out: dict[str, np.ndarray] = {}
        for col in TABLE_COLUMNS:
            vals = [getattr(f, col) for f in self.frames]
            kind = np.int64 if col.endswith("_count") or col == "frame" else np.float64
            if all(v is None for v in vals) and vals:  # level points not computed
                continue
            if any(v is None for v in vals):
                vals, kind = [np.nan if v is None else v for v in vals], np.float64
            out[col] = np.array(vals, dtype=kind)
        out["verdict"] = np.array([f.verdict for f in self.frames])
        return out

    def vertex_heat(self, frame: int) -> np.ndarray:
        """(V,) float64: worst local severity per vertex, 1.0 = at the failure threshold."""
        from .metrics import frame_metrics, reference_frame
        from .singular import vertex_heat

        if not 0 <= frame < len(self.frames):
            raise IndexError(f"frame {frame} out of range 0..{len(self.frames) - 1}")
        P, topo = self._positions, self._topo
        if P is None or topo is None:
            raise RuntimeError("this report keeps no positions to recompute heat from")
        ref = reference_frame(P[0], topo)
        prev = P[frame - 1] if frame > 0 else None
        fm = frame_metrics(P[frame], topo, ref, previous=prev, orientable=self._orientable)
        return vertex_heat(fm, topo, self.thresholds)

    def double_curves(self, frame: int) -> list[np.ndarray]:
        """Double curves of a frame as (k, 3) float64 polylines (needs intersections=True)."""
        if not self.intersections_checked:
            raise RuntimeError("this report was made with intersections=False")
        res = self._intersections.get(frame)
        return [] if res is None else res.polylines()

    # --- output -------------------------------------------------------------------------

    def to_dict(self) -> dict:
        return _clean(
            {
                "schema": SCHEMA,
                "verdict": self.verdict,
                "everted": self.everted,
                "reasons": list(self.reasons),
                "n_frames": len(self.frames),
                "failing_frames": self.failing_frames(),
                "warning_frames": self.warning_frames(),
                "noted_frames": self.noted_frames(),
                "worst_frame": self.worst_frame,
                "intersections_checked": self.intersections_checked,
                "level_up": None if self.level_up is None else list(self.level_up),
                "eversion": None if self.eversion is None else self.eversion.to_dict(),
                "topology": self.topology.to_dict(),
                "thresholds": self.thresholds.to_dict(),
                "frames": [f.to_dict() for f in self.frames],
                "quadruple_points": (
                    None if self.quadruple_points is None else self.quadruple_points.to_json()
                ),
            }
        )

    def write_json(self, path) -> Path:
        from ..output import write_bytes  # "-" is standard output

        text = json.dumps(self.to_dict(), indent=2, allow_nan=False) + "\n"
        write_bytes(path, text.encode("utf-8"))
        return Path(path)

    def write_csv(self, path) -> Path:
        from ..output import write_bytes  # "-" is standard output

        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow([*TABLE_COLUMNS, "verdict", "reasons", "notes"])
        for f in self.frames:
            row = []
            for col in TABLE_COLUMNS:
                v = _clean(getattr(f, col))
                row.append("" if v is None else (f"{v:.9g}" if isinstance(v, float) else v))
            w.writerow([*row, f.verdict, "; ".join(f.reasons), "; ".join(f.notes)])
        write_bytes(path, buf.getvalue().encode("utf-8"))
        return Path(path)

    def write_plot(self, path) -> Path:
        """PNG of the metrics over frames, thresholds dashed, failing frames shaded."""
        try:
            import matplotlib

            matplotlib.use("Agg", force=False)
            import matplotlib.pyplot as plt
        except ImportError as exc:  # pragma: no cover - depends on the environment
            raise RuntimeError(
                "plots need matplotlib: install the 'plot' extra (pip install turnabout[plot])"
            ) from exc
        from ..output import atomic_write_bytes

        t = self.metrics_table()
        th = self.thresholds
        x = t["frame"]
        panels = [
            ("min_area_ratio", "min face area ratio", "log",
             (th.area_ratio_warn, th.area_ratio_fail)),
            ("max_crease_deg", "max crease angle (°)", "linear",
             (th.crease_warn_deg, th.crease_fail_deg)),
            ("min_fold", "min normal agreement", "linear", (th.fold_warn, th.fold_fail)),
            ("min_bend_radius", "min bend radius / size", "log", (th.bend_warn, th.bend_fail)),
            ("max_step", "max step (edge lengths)", "linear", (th.step_warn, th.step_fail)),
            ("signed_volume", "signed volume", "linear", ()),
            ("triple_point_count", "triple points / double curves", "linear", ()),
        ]  # fmt: skip
        fig, axes = plt.subplots(len(panels), 1, figsize=(8, 1.6 * len(panels)), sharex=True)
        fail = t["verdict"] == "fail"
        warn = t["verdict"] == "warn"
        for ax, (key, label, scale, lines) in zip(axes, panels, strict=True):
            y = np.where(np.isfinite(t[key]), t[key], np.nan)
            if scale == "log":
                y = np.where(y > 0, y, np.nan)
            ax.plot(x, y, color="black", lw=1.2)
            if key == "triple_point_count":
                ax.plot(x, t["double_curve_count"], color="tab:blue", lw=1.0, ls=":")
            if scale == "log" and np.any(np.isfinite(y)):
                ax.set_yscale("log")
            for value, colour in zip(lines, ("tab:orange", "tab:red"), strict=False):
                ax.axhline(value, color=colour, ls="--", lw=0.8)
            for mask, colour in ((warn, "gold"), (fail, "tab:red")):
                for f in x[mask]:
                    ax.axvspan(f - 0.5, f + 0.5, color=colour, alpha=0.25, lw=0)
            ax.set_ylabel(label, fontsize=7)
            ax.tick_params(labelsize=7)
        axes[-1].set_xlabel("frame")
        fig.suptitle(
            f"verdict: {self.verdict}   everted: {self.everted}   "
            f"failing frames: {len(self.failing_frames())}",
            fontsize=9,
        )
        fig.tight_layout()
        buf = io.BytesIO()
        fig.savefig(buf, format="png", dpi=110)
        plt.close(fig)
        atomic_write_bytes(Path(path), buf.getvalue())
        return Path(path)

