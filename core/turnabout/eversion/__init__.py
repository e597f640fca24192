"""The corrugated sphere eversion (Thurston's corrugation method, 1974).

Public API::

    controls = Controls(strips=8)             # validated artistic controls
    mesh = mesh_for(controls)             # SphereMesh sampled where the waves bend
    P = evaluate(controls, times, mesh)       # (frames, V, 3) float64 positions
    ev = build(controls)                      # Eversion of DEFAULT_FRAMES (480) frames
"""

from .controls import (
    DEFAULT_FRAMES,
    MAX_STRIPS,
    MIN_STRIPS,
    STAGE_HELP,
    STAGE_NAMES,
    ControlError,
    Controls,
    default_depth,
    default_frames,
    default_timing,
    depth_range,
)
from .frames import Eversion, build, evaluate
from .regularity import RegularityError, RegularityReport, quick_scan, scan
from .spacing import check_resolution, mesh_for

__all__ = [
    "DEFAULT_FRAMES",
    "MAX_STRIPS",
    "MIN_STRIPS",
    "STAGE_HELP",
    "STAGE_NAMES",
    "ControlError",
    "Controls",
    "Eversion",
    "build",
    "default_depth",
    "default_frames",
    "default_timing",
    "mesh_for",
    "depth_range",
    "evaluate",
    "check_resolution",
    "RegularityError",
    "RegularityReport",
    "quick_scan",
    "scan",
]
