"""check_animation: judge every frame of a mesh animation, then the animation as a whole."""

from __future__ import annotations

import numpy as np

from ..progress import ProgressFn, no_progress
from .intersections import IntersectionResult, self_intersections
from .metrics import FrameMetrics, frame_metrics, reference_frame
from .report import VERDICTS, AnimationReport, FrameReport
from .roundness import eversion_check
from .singular import failing_clusters, vertex_heat
from .thresholds import METRICS, Thresholds, severity, warn_severity
from .topology import MeshTopology, TopologyError, as_triangles, topology_report


class CheckInputError(ValueError):
    """Positions or faces that cannot be checked (the message says what and what is allowed)."""


def _validated_positions(positions) -> np.ndarray:
    try:
        P = np.asarray(positions)
    except (TypeError, ValueError) as exc:
        raise CheckInputError(f"positions are not a numeric array ({exc})") from None
    if P.ndim == 2:
        P = P[None]
    if P.ndim != 3 or P.shape[-1] != 3:
        raise CheckInputError(f"positions must be (frames, vertices, 3), got shape {P.shape}")
    if P.dtype.kind not in "fiu":
        raise CheckInputError(f"positions must be numbers, got dtype {P.dtype}")
    if P.shape[0] == 0 or P.shape[1] == 0:
        raise CheckInputError(f"positions are empty (shape {P.shape})")
    bad = ~np.isfinite(P)
    if bad.any():
        f, v, _ = np.argwhere(bad)[0]
        raise CheckInputError(
            f"positions contain NaN or infinity (first at frame {f}, vertex {v}); "
            "every coordinate must be a finite number"
        )
    return P


def _element_position(kind: str, index: int, P: np.ndarray, topo: MeshTopology) -> np.ndarray:
    if kind == "face":
        return P[topo.faces[index]].mean(axis=0)
    if kind == "edge":
        return P[topo.edges[index]].mean(axis=0)
    return P[index]


def _fmt(v: float) -> str:
    return f"{v:.3g}"


def judge_frame(
    k: int,
    P: np.ndarray,
    fm: FrameMetrics,
    topo: MeshTopology,
    th: Thresholds,
    chi: int,
    closed_manifold: bool,
    orientable: bool,
    inter: IntersectionResult | None,
    time: float = float("nan"),
) -> FrameReport:
    """The FrameReport of one frame from its metrics (and intersections, if computed)."""
    fails: list[str] = []
    warns: list[str] = []
    worst = (-np.inf, "vertex", 0, "none")
    worst_shape = 0.0  # worst severity excluding jumps (drives the singular clusters)
    for spec in METRICS:
        if spec.name == "step" and k == 0:
            continue
        vals = getattr(fm, spec.name)
        # severities are monotonic in the value: judge the extreme element only
        i = int(np.argmin(vals)) if spec.worse == "lower" else int(np.argmax(vals))
        value = float(vals[i])
        s = float(severity(spec, np.array([value]), th)[0])
        if s > worst[0]:
            worst = (s, spec.element, i, spec.name)
        if spec.name != "step":
            worst_shape = max(worst_shape, s)
        where = f"{spec.element} {i}"
        if s >= 1.0:
            limit = getattr(th, spec.fail_attr)
            fails.append(f"{spec.label}: {_fmt(value)}{spec.unit} at {where} (fails at {limit})")
        elif s >= warn_severity(spec, th):
            limit = getattr(th, spec.warn_attr)
            warns.append(f"{spec.label}: {_fmt(value)}{spec.unit} at {where} (warns at {limit})")
    judged = fm.crease_deg >= th.concentration_min_deg
    max_conc = 0.0
    if judged.any():
        cand = np.flatnonzero(judged)
        j = int(np.argmax(fm.crease_concentration[cand]))
        max_conc = float(fm.crease_concentration[cand[j]])
    if max_conc >= th.concentration_warn:
        i = int(cand[j])
        warns.append(
            f"crease concentrated on edge {i}: {_fmt(fm.crease_deg[i])}° there, "
            f"{_fmt(fm.crease_concentration[i])} times its neighbours' mean"
        )
    if orientable and closed_manifold and np.isfinite(fm.degree):
        expected = chi / 2
        if abs(fm.degree - expected) > th.degree_tolerance:
            warns.append(
                f"Gauss-map degree {_fmt(fm.degree)} differs from chi/2 = {_fmt(expected)} "
                "(Hopf): neighbouring vertex normals are nearly opposite somewhere"
            )
    singular = []
    if worst_shape >= 1.0:
        heat = vertex_heat(fm, topo, th, include_step=False)
        singular = failing_clusters(heat, P, topo, fm.local_length)
    triple_count = curve_count = degenerate = 0
    triple_pts = np.zeros((0, 3))
    closed_flags: list[bool] = []
    if inter is not None:
        triple_count = inter.triple_point_count
        curve_count = inter.double_curve_count
        triple_pts = inter.triple_points
        closed_flags = list(inter.curve_closed)
        degenerate = inter.degenerate_pairs
        if degenerate:
            warns.append(
                f"{degenerate} face pair(s) touch without crossing cleanly: the frame is not "
                "generic there"
            )
        if np.any(inter.triple_detections != 3):
            warns.append("a triple point was not seen by all three of its double curves")
        generic = not singular and degenerate == 0
        if closed_manifold and generic and (triple_count - chi) % 2 != 0:
            warns.append(
                f"{triple_count} triple point(s), but a generic immersed closed surface with "
                f"chi = {chi} has a number congruent to chi mod 2 (Banchoff 1974): the frame "
                "is not generic or the mesh is defective"
            )
    verdict = "fail" if fails else ("warn" if warns else "ok")
    s, kind, idx, metric = worst
    pos = _element_position(kind, idx, P, topo)
    return FrameReport(
        frame=k,
        verdict=verdict,
        reasons=fails + warns,
        degree=fm.degree,
        signed_volume=fm.signed_volume,
        triple_point_count=triple_count,
        double_curve_count=curve_count,
        singular_point_count=len(singular),
        max_crease_deg=float(fm.crease_deg.max(initial=0.0)),
        min_area_ratio=float(fm.area_ratio.min()),
        max_step=float(fm.step.max(initial=0.0)),
        worst_element={"kind": kind, "index": idx, "metric": metric},
        worst_position=(float(pos[0]), float(pos[1]), float(pos[2])),
        time=time,
        max_crease_concentration=max_conc,
        min_quality_ratio=float(fm.quality_ratio.min()),
        min_fold=float(fm.fold.min()),
        min_bend_radius=float(fm.bend_radius.min()),
        max_severity=float(s),
        area=fm.area,
        size=fm.size,
        singular_points=singular,
        triple_points=triple_pts,
        double_curves_closed=closed_flags,
        degenerate_pairs=degenerate,
    )


def check_animation(
    positions,
    faces,
    thresholds: Thresholds | None = None,
    times=None,
    progress: ProgressFn | None = None,
    intersections: bool = True,
    use_mathutils: bool = False,
) -> AnimationReport:
    """Judge every frame of an animation of a fixed mesh.

    positions : (F, V, 3) or (V, 3) float32/float64; faces : (M, 3) int or a list of
    polygons (triangulated as fans); times : optional (F,) float; progress(done, total) is
    called once per frame and may raise turnabout.progress.Cancelled; intersections=False
    skips double curves and triple points (the slow part); use_mathutils takes the
    intersection broad phase from Blender's BVH when importable.
    """
    th = Thresholds() if thresholds is None else thresholds
    if not isinstance(th, Thresholds):
        raise CheckInputError("thresholds must be a turnabout.check.Thresholds")
    progress = no_progress if progress is None else progress
    P = _validated_positions(positions)
    n_frames, n_vertices = P.shape[0], P.shape[1]
    if times is not None:
        times = np.asarray(times, np.float64).ravel()
        if times.shape != (n_frames,) or not np.all(np.isfinite(times)):
            raise CheckInputError(f"times must be {n_frames} finite numbers, one per frame")
    try:
        tri = as_triangles(faces if isinstance(faces, np.ndarray) else list(faces), n_vertices)
    except TopologyError as exc:
        raise CheckInputError(f"faces: {exc}") from None
    except (TypeError, ValueError) as exc:
        raise CheckInputError(f"faces are not integer vertex indices ({exc})") from None
    topo = MeshTopology(tri, n_vertices)
    treport = topology_report(topo)
    anim_reasons: list[str] = []
    if treport.orientable and not treport.consistently_oriented and treport.is_manifold:
        signs, _, _ = topo.face_orientation_signs()
        tri = np.where((signs < 0)[:, None], tri[:, ::-1], tri).astype(np.int32)
        topo = MeshTopology(tri, n_vertices)
        anim_reasons.append(
            "faces were not consistently oriented; they were reoriented to agree with face 0 "
            "of each component"
        )
    if not treport.is_manifold:
        anim_reasons.append(
            f"the mesh is not a closed 2-manifold ({treport.boundary_edges} boundary edges, "
            f"{treport.nonmanifold_edges} non-manifold edges, {treport.nonmanifold_vertices} "
            "non-manifold vertices): it cannot be an immersed closed surface"
        )
    orientable = treport.orientable
    chi = treport.euler_characteristic
    closed_manifold = treport.is_manifold
    ref = reference_frame(P[0], topo)
    frames: list[FrameReport] = []
    inter_results: dict[int, IntersectionResult] = {}
    prev = None
    prev_len = None
    for k in range(n_frames):
        Pk = np.asarray(P[k], np.float64)
        fm = frame_metrics(Pk, topo, ref, previous=prev, previous_length=prev_len,
                           orientable=orientable)  # fmt: skip
        inter = None
        if intersections:
            inter = self_intersections(Pk, topo, use_mathutils=use_mathutils)
            if inter.segments.shape[0]:
                inter_results[k] = inter
        t = float(times[k]) if times is not None else float("nan")
        frames.append(judge_frame(k, Pk, fm, topo, th, chi, closed_manifold, orientable, inter, t))
        prev, prev_len = Pk, fm.local_length
        progress(k + 1, n_frames)
    ev = None
    if treport.is_sphere and n_frames >= 2:
        ev = eversion_check(P[0], P[-1], topo.edges, frames[0].signed_volume,
                            frames[-1].signed_volume, th.sphere_tolerance)  # fmt: skip
    rank = max((VERDICTS.index(f.verdict) for f in frames), default=0)
    if anim_reasons and rank == 0:
        rank = 1
    nfail = sum(f.verdict == "fail" for f in frames)
    if nfail:
        anim_reasons.insert(0, f"{nfail} of {n_frames} frame(s) fail")
    return AnimationReport(
        verdict=VERDICTS[rank],
        everted=bool(ev is not None and ev.everted),
        frames=frames,
        topology=treport,
        thresholds=th,
        eversion=ev,
        reasons=anim_reasons,
        intersections_checked=intersections,
        _positions=P,
        _topo=topo,
        _intersections=inter_results,
        _orientable=orientable,
    )
