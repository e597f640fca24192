"""Thresholds of the immersion checks, and severities normalised to them.

Every default and its reasoning is documented in docs/checker.md. A severity is a metric
rescaled so that 1.0 sits exactly at the failure threshold and larger is worse; the heat
map, the worst element and the singular-point clusters all work in severities.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, fields

import numpy as np

_TINY = np.finfo(np.float64).tiny


class ThresholdError(ValueError):
    """A threshold out of its allowed range (the message names it and the range)."""


@dataclass(frozen=True)
class Thresholds:
    """Warn / fail levels of every per-frame check (see docs/checker.md for the reasons)."""

    # pinch: face area and shape quality relative to the first frame (lower is worse)
    area_ratio_warn: float = 0.1
    area_ratio_fail: float = 0.01
    quality_ratio_warn: float = 0.1
    quality_ratio_fail: float = 0.01
    # crease: angle between neighbouring face normals, degrees (higher is worse)
    crease_warn_deg: float = 30.0
    crease_fail_deg: float = 60.0
    # crease concentration: an edge's angle over the mean of its four wing edges (warn only,
    # and only for edges turning at least concentration_min_deg)
    concentration_warn: float = 4.0
    concentration_min_deg: float = 20.0
    # fold: min over a vertex's faces of n_face . n_vertex (lower is worse; 0 = a face at 90°)
    fold_warn: float = 0.5
    fold_fail: float = 0.0
    # tight bend: smallest bend radius 1/|k|max as a fraction of the bounding-box diagonal
    bend_warn: float = 0.002
    bend_fail: float = 0.0005
    # jump: vertex move between consecutive frames in local edge lengths (higher is worse)
    step_warn: float = 1.0
    step_fail: float = 4.0
    # Gauss-map degree: allowed distance from chi / 2 (Hopf) before a warning
    degree_tolerance: float = 0.05
    # finished eversion: radial deviation from the first frame's sphere, fraction of radius
    sphere_tolerance: float = 0.01

    def __post_init__(self) -> None:
        for f in fields(self):
            v = getattr(self, f.name)
            if isinstance(v, bool) or not isinstance(v, int | float) or not np.isfinite(v):
                raise ThresholdError(f"{f.name} must be a finite number, got {v!r}")
        positive = [
            "area_ratio_warn", "area_ratio_fail", "quality_ratio_warn", "quality_ratio_fail",
            "crease_warn_deg", "crease_fail_deg", "concentration_warn", "bend_warn",
            "bend_fail", "step_warn", "step_fail", "degree_tolerance", "sphere_tolerance",
        ]  # fmt: skip
        for name in positive:
            if getattr(self, name) <= 0:
                raise ThresholdError(f"{name} must be > 0, got {getattr(self, name)}")
        for lo_name, hi_name in [
            ("area_ratio_fail", "area_ratio_warn"),
            ("quality_ratio_fail", "quality_ratio_warn"),
            ("crease_warn_deg", "crease_fail_deg"),
            ("fold_fail", "fold_warn"),
            ("bend_fail", "bend_warn"),
            ("step_warn", "step_fail"),
        ]:
            if getattr(self, lo_name) > getattr(self, hi_name):
                raise ThresholdError(
                    f"{lo_name} ({getattr(self, lo_name)}) must not exceed {hi_name} "
                    f"({getattr(self, hi_name)})"
                )
        if not (-1.0 <= self.fold_fail < 1.0 and -1.0 <= self.fold_warn < 1.0):
            raise ThresholdError("fold_warn and fold_fail must lie in [-1, 1)")
        if self.crease_fail_deg > 180 or self.concentration_min_deg < 0:
            raise ThresholdError("crease angles are in degrees, 0..180")
        if self.area_ratio_warn > 1 or self.quality_ratio_warn > 1:
            raise ThresholdError("area and quality ratio thresholds must be at most 1")

    def to_dict(self) -> dict:
        return asdict(self)


# --- severities (1.0 = at the failure threshold) ----------------------------------------


def lower_is_worse(value: np.ndarray, fail: float) -> np.ndarray:
    """Severity of a ratio that fails at or below ``fail``: fail / value."""
    return fail / np.maximum(value, _TINY)


def higher_is_worse(value: np.ndarray, fail: float) -> np.ndarray:
    """Severity of a magnitude that fails at or above ``fail``: value / fail."""
    return np.asarray(value) / fail


def fold_severity(value: np.ndarray, fail: float) -> np.ndarray:
    """Severity of a normal agreement in [-1, 1] that fails at or below ``fail``."""
    return (1.0 - np.asarray(value)) / (1.0 - fail)


@dataclass(frozen=True)
class MetricSpec:
    """How one per-element metric is judged."""

    name: str  # key in FrameMetrics
    label: str  # word used in reasons
    element: str  # "face", "edge" or "vertex"
    worse: str  # "lower" or "higher"
    warn_attr: str
    fail_attr: str
    unit: str = ""


METRICS: tuple[MetricSpec, ...] = (
    MetricSpec("area_ratio", "pinch (area)", "face", "lower", "area_ratio_warn", "area_ratio_fail"),
    MetricSpec(
        "quality_ratio",
        "pinch (shape)",
        "face",
        "lower",
        "quality_ratio_warn",
        "quality_ratio_fail",
    ),
    MetricSpec("crease_deg", "crease", "edge", "higher", "crease_warn_deg", "crease_fail_deg", "°"),
    MetricSpec("fold", "fold", "vertex", "lower", "fold_warn", "fold_fail"),
    MetricSpec("bend_radius", "tight bend", "vertex", "lower", "bend_warn", "bend_fail"),
    MetricSpec("step", "jump", "vertex", "higher", "step_warn", "step_fail", " edge lengths"),
)


def severity(spec: MetricSpec, values: np.ndarray, th: Thresholds) -> np.ndarray:
    fail = getattr(th, spec.fail_attr)
    if spec.name == "fold":
        return fold_severity(values, fail)
    if spec.worse == "lower":
        return lower_is_worse(values, fail)
    return higher_is_worse(values, fail)


def warn_severity(spec: MetricSpec, th: Thresholds) -> float:
    """The severity at the warning threshold (below 1)."""
    warn = getattr(th, spec.warn_attr)
    return float(severity(spec, np.array([warn]), th)[0])
