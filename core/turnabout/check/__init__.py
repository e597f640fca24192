"""Frame-by-frame immersion checks of mesh animations (Blender-free).

>>> report = check_animation(positions, faces)          # doctest: +SKIP
>>> report.verdict, report.everted, report.failing_frames()  # doctest: +SKIP

One module per concern: ``topology`` (fixed adjacency, the topology report), ``curvature``,
``metrics`` (per-element local metrics of a frame), ``intersections`` (double curves and
triple points), ``singular`` (clusters of failing elements), ``roundness`` (the finished
eversion test), ``thresholds`` and ``report``.
"""

from .animation import CheckInputError, check_animation, judge_frame
from .intersections import IntersectionResult, self_intersections
from .metrics import FrameMetrics, frame_metrics, gauss_map_degree, signed_volume
from .report import AnimationReport, FrameReport
from .singular import SingularPoint
from .thresholds import ThresholdError, Thresholds
from .topology import MeshTopology, TopologyError, TopologyReport, topology_report

__all__ = [
    "AnimationReport",
    "CheckInputError",
    "FrameMetrics",
    "FrameReport",
    "IntersectionResult",
    "MeshTopology",
    "SingularPoint",
    "ThresholdError",
    "Thresholds",
    "TopologyError",
    "TopologyReport",
    "check_animation",
    "frame_metrics",
    "gauss_map_degree",
    "judge_frame",
    "self_intersections",
    "signed_volume",
    "topology_report",
]
