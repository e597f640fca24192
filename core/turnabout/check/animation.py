"""check_animation: judge every frame of a mesh animation, then the animation as a whole."""

from __future__ import annotations

import multiprocessing as mp
import os
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass

import numpy as np

from ..progress import ProgressFn, no_progress
from .intersections import IntersectionResult, self_intersections
from .metrics import FrameMetrics, ReferenceFrame, frame_metrics, reference_frame
from .report import VERDICTS, AnimationReport, FrameReport
from .roundness import eversion_check
from .singular import failing_clusters, vertex_heat
from .thresholds import METRICS, Thresholds, severity, warn_severity
from .topology import MeshTopology, TopologyError, as_triangles, topology_report
from .vertex_sums import CornerSums


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
    notes: list[str] = []  # true facts of the surface or its sampling, not faults
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
            f"crease concentrated: edge {i} turns {_fmt(fm.crease_deg[i])}°, "
            f"{_fmt(fm.crease_concentration[i])} times the edges one row over on either side "
            f"(warns at {th.concentration_warn})"
        )
    if orientable and closed_manifold and np.isfinite(fm.degree):
        expected = chi / 2
        if abs(fm.degree - expected) > th.degree_tolerance:
            warns.append(
                f"Gauss-map degree: {_fmt(fm.degree)} differs from chi/2 = {_fmt(expected)} "
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
                f"touching faces: {degenerate} face pair(s) touch without crossing cleanly: "
                "the frame is not generic there"
            )
        detections = np.asarray(inter.triple_detections, np.int64)
        sheets = sheets_meeting(detections)
        if np.any(detections % 3 != 0):
            warns.append(
                "unmatched triple point: a triple point was not seen by all three of its "
                "double curves"
            )
        on_edge = (sheets == 0) & (detections % 3 == 0)
        if on_edge.any():
            notes.append(
                f"triple points on mesh edges: {int(on_edge.sum())} triple point(s) on a mesh "
                f"edge or vertex (seen {int(detections[on_edge].max())} times), where the "
                "sampling puts them"
            )
        multiple = sheets[sheets > 3]
        if multiple.size:
            notes.append(
                f"multiple points: {multiple.size} point(s) where more than three sheets meet "
                f"(up to {int(multiple.max())}), as on the axis of a symmetric surface"
            )
        # a point where k sheets meet splits into C(k, 3) triple points under a generic
        # perturbation: that is the count Banchoff's parity applies to
        ks = np.where(sheets >= 3, sheets, 3).astype(np.int64)
        generic_count = int((ks * (ks - 1) * (ks - 2) // 6).sum())
        generic = not singular and degenerate == 0
        if closed_manifold and generic and (generic_count - chi) % 2 != 0:
            warns.append(
                f"triple-point parity: {generic_count} triple point(s), but a generic immersed "
                f"closed surface with chi = {chi} has a number congruent to chi mod 2 "
                "(Banchoff 1974): the frame is not generic or the mesh is defective"
            )
    verdict = "fail" if fails else ("warn" if warns else "ok")
    s, kind, idx, metric = worst
    pos = _element_position(kind, idx, P, topo)
    return FrameReport(
        frame=k,
        verdict=verdict,
        reasons=fails + warns,
        notes=notes,
        fail_count=len(fails),
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


@dataclass(frozen=True)
class _FrameJob:
    """Everything needed to judge a range of frames (shared with forked workers)."""

    P: np.ndarray
    topo: MeshTopology
    ref: ReferenceFrame
    th: Thresholds
    chi: int
    closed_manifold: bool
    orientable: bool
    intersections: bool
    use_mathutils: bool
    times: np.ndarray | None
    sums: CornerSums  # the topology's corner tables, built once and shared (read-only)
    threads: int = 1  # threads of each frame's self-intersection search


CHUNKS_PER_WORKER = 32  # frame ranges handed to each worker process (about)
THREADS = 4  # most threads one frame's self-intersection search uses


def intersection_threads(workers: int) -> int:
    """Threads per process for the self-intersection search when ``workers`` processes share
    the machine: the cores left to each, from 1 to THREADS."""
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    w = workers if isinstance(workers, int | np.integer) and workers >= 1 else 1
    return int(max(1, min(THREADS, (cores or 1) // w)))


def _judge_range(job: _FrameJob, start: int, stop: int, progress: ProgressFn | None = None):
    """FrameReports of frames start..stop-1 and their intersection results."""
    reports: list[FrameReport] = []
    inters: dict[int, IntersectionResult] = {}
    prev = np.asarray(job.P[start - 1], np.float64) if start > 0 else None
    prev_len = None
    for k in range(start, stop):
        Pk = np.asarray(job.P[k], np.float64)
        fm = frame_metrics(Pk, job.topo, job.ref, previous=prev, previous_length=prev_len,
                           orientable=job.orientable, sums=job.sums)  # fmt: skip
        inter = None
        if job.intersections:
            inter = self_intersections(Pk, job.topo, use_mathutils=job.use_mathutils,
                                       threads=job.threads)  # fmt: skip
            if inter.segments.shape[0]:
                inters[k] = inter
        t = float(job.times[k]) if job.times is not None else float("nan")
        reports.append(judge_frame(k, Pk, fm, job.topo, job.th, job.chi, job.closed_manifold,
                                   job.orientable, inter, t))  # fmt: skip
        prev, prev_len = Pk, fm.local_length
        if progress is not None:
            progress(k + 1, job.P.shape[0])
    return reports, inters


# Set by the pool initializer inside forked worker processes only.
_WORKER_JOB: list[_FrameJob] = []


def _worker_init(job: _FrameJob) -> None:
    _WORKER_JOB[:] = [job]


def _worker_range(start: int, stop: int):
    return _judge_range(_WORKER_JOB[0], start, stop)


def _run_frames_dask(job: _FrameJob, client, retries: int, progress: ProgressFn):
    """Chunks of frames as Dask tasks (the job sent once to every worker), each with retries."""
    from ..cluster import run_dask

    n = job.P.shape[0]
    chunk = max(2, -(-n // (4 * max(1, len(client.nthreads())))))
    bounds = [(s, min(s + chunk, n)) for s in range(0, n, chunk)]
    shared = client.scatter(job, broadcast=True)
    results, done = {}, 0
    for i, res in run_dask(client, _judge_range, [(shared, a, b) for a, b in bounds], retries):
        results[bounds[i][0]] = res
        done += len(res[0])
        progress(done, n)
    return results


def _run_frames(job: _FrameJob, workers: int, progress: ProgressFn, client=None, retries=3):
    n = job.P.shape[0]
    if client is not None:
        results = _run_frames_dask(job, client, retries, progress)
        return _joined(results)
    if isinstance(workers, bool) or not isinstance(workers, int | np.integer) or workers < 1:
        raise CheckInputError(f"workers must be an integer >= 1, got {workers!r}")
    if workers == 1 or n < 4 or "fork" not in mp.get_all_start_methods():
        return _judge_range(job, 0, n, progress)
    # small chunks: the costly mid-motion frames spread over the workers, and the progress
    # bar moves every few frames rather than once a large share of them
    chunk = max(2, -(-n // (CHUNKS_PER_WORKER * workers)))
    bounds = [(s, min(s + chunk, n)) for s in range(0, n, chunk)]
    results: dict[int, tuple] = {}
    done = 0
    with ProcessPoolExecutor(
        max_workers=workers, mp_context=mp.get_context("fork"),
        initializer=_worker_init, initargs=(job,),
    ) as pool:  # fmt: skip
        futures = {pool.submit(_worker_range, a, b): a for a, b in bounds}
        try:
            for fut in as_completed(futures):
                start = futures[fut]
                results[start] = fut.result()
                done += len(results[start][0])
                progress(done, n)
        except BaseException:
            pool.shutdown(wait=True, cancel_futures=True)
            raise
    return _joined(results)


def _joined(results: dict[int, tuple]):
    frames: list[FrameReport] = []
    inters: dict[int, IntersectionResult] = {}
    for start in sorted(results):
        reps, its = results[start]
        frames.extend(reps)
        inters.update(its)
    return frames, inters


def sheets_meeting(detections: np.ndarray) -> np.ndarray:
    """Sheets through each detected point from its detection count, 0 where it does not fit.

    Each pair of the k sheets through a point has a double curve that crosses each of the
    other k - 2 sheets there, so the point is detected k (k - 1) (k - 2) / 2 times: 3 for a
    triple point, 12 for four sheets, 168 for eight.
    """
    d = np.asarray(detections, np.int64)
    k = np.round(np.cbrt(2.0 * d)).astype(np.int64) + 1  # k^3 ~ 2 d, plus a margin
    out = np.zeros(d.shape, np.int64)
    for trial in (k - 2, k - 1, k, k + 1):
        hit = (trial >= 3) & (trial * (trial - 1) * (trial - 2) // 2 == d)
        out = np.where(hit & (out == 0), trial, out)
    return out


def _add_level_counts(frames: list[FrameReport], counts: np.ndarray, chi: int) -> None:
    """Store each frame's level-point counts (F, 4); warn where the signed count is not
    chi / 2 (Hopf: the Gauss-map degree of an immersed closed oriented surface)."""
    for fr, (signed, domes, bowls, saddles) in zip(frames, counts.tolist(), strict=True):
        fr.level_signed_count, fr.dome_count = signed, domes
        fr.bowl_count, fr.saddle_count = bowls, saddles
        if 2 * signed != chi:
            fr.reasons.append(
                f"level points: domes + bowls - saddles = {signed}, but chi/2 = {chi / 2:g} "
                "(Hopf): some vertex star folds over seen along the up direction"
            )
            if fr.verdict == "ok":
                fr.verdict = "warn"


def check_animation(
    positions,
    faces,
    thresholds: Thresholds | None = None,
    times=None,
    progress: ProgressFn | None = None,
    intersections: bool = True,
    use_mathutils: bool = False,
    workers: int = 1,
    level_counts=None,
    level_up=None,
    quadruple: bool = False,
    client=None,
    retries: int = 3,
    quadruple_progress: ProgressFn | None = None,
) -> AnimationReport:
    """Judge every frame of an animation of a fixed mesh.

    positions : (F, V, 3) or (V, 3) float32/float64; faces : (M, 3) int or a list of
    polygons (triangulated as fans); times : optional (F,) float, each frame's time (NaN
    where unknown; reported per frame, null in JSON for NaN); progress(done, total) is
    called once per frame and may raise turnabout.progress.Cancelled; intersections=False
    skips double curves and triple points (the slow part); use_mathutils takes the
    intersection broad phase from Blender's BVH when importable; workers > 1 judges chunks
    of frames in that many forked processes (POSIX only; otherwise frames run in-process);
    quadruple=True (with intersections) also finds the quadruple points between frames
    (turnabout.check.quadruple; report.quadruple_points), on ``workers`` processes, calling
    quadruple_progress(done, total) as intervals finish.
    level_counts(positions (F, V, 3), faces (M, 3) int32) -> (F, 4) int: per frame the
    level points' signed count and the numbers of domes, bowls and saddles (see
    turnabout.views.levels), called once on closed orientable manifolds (faces oriented);
    level_up : the unit up direction it used, recorded in the report.
    client : a dask.distributed Client: chunks of frames run as tasks on its workers (each
    with ``retries``), with the same report as a local run; ``workers`` is then unused.
    """
    th = Thresholds() if thresholds is None else thresholds
    if not isinstance(th, Thresholds):
        raise CheckInputError("thresholds must be a turnabout.check.Thresholds")
    progress = no_progress if progress is None else progress
    P = _validated_positions(positions)
    n_frames, n_vertices = P.shape[0], P.shape[1]
    if times is not None:
        try:
            times = np.asarray(times, np.float64).ravel()
        except (TypeError, ValueError):
            times = np.zeros(0)
        if times.shape != (n_frames,) or np.any(np.isinf(times)):
            raise CheckInputError(
                f"times must be {n_frames} numbers, one per frame (NaN where unknown)"
            )
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
            f"{treport.boundary_vertices} boundary vertices, {treport.nonmanifold_edges} "
            f"non-manifold edges, {treport.nonmanifold_vertices} non-manifold vertices): it "
            "cannot be an immersed closed surface"
        )
    orientable = treport.orientable
    chi = treport.euler_characteristic
    closed_manifold = treport.is_manifold
    ref = reference_frame(P[0], topo)
    # one process uses the machine's cores as threads of the self-intersection search (up to
    # THREADS); several processes use one each. The results do not depend on it.
    threads = 1 if client is not None else intersection_threads(workers)
    job = _FrameJob(P, topo, ref, th, chi, closed_manifold, orientable, intersections,
                    use_mathutils, times, CornerSums(topo), threads)  # fmt: skip
    frames, inter_results = _run_frames(job, workers, progress, client, retries)
    counts = None
    if level_counts is not None and closed_manifold and orientable:
        counts = level_counts(P, topo.faces)  # None when it cannot count
    levels_done = counts is not None
    if levels_done:
        _add_level_counts(frames, np.asarray(counts, np.int64).reshape(n_frames, 4), chi)
    ev = None
    if treport.is_sphere and n_frames >= 2:
        ev = eversion_check(P[0], P[-1], topo.edges, frames[0].signed_volume,
                            frames[-1].signed_volume, th.sphere_tolerance)  # fmt: skip
    quad = None
    if quadruple and intersections and n_frames >= 2:
        from .quadruple import quadruple_points

        quad = quadruple_points(P, topo.faces, quadruple_progress, inter_results,
                                workers=1 if client is not None else workers)  # fmt: skip
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
        quadruple_points=quad,
        _positions=P,
        _topo=topo,
        _intersections=inter_results,
        _orientable=orientable,
        level_up=(
            tuple(float(x) for x in level_up) if levels_done and level_up is not None else None
        ),
    )
