"""``turnabout check``: judge every frame of a mesh animation file.

Exit codes: 0 every frame passes (ok or warn), 1 some frame fails, 2 unreadable input.
"""

from __future__ import annotations

import argparse
import sys
from dataclasses import fields
from pathlib import Path

from ..progress import Cancelled, ProgressBar

# (option, Thresholds field, help)
_THRESHOLD_OPTIONS = (
    ("--area-warn", "area_ratio_warn", "face area / first-frame area below which to warn"),
    ("--area-fail", "area_ratio_fail", "face area / first-frame area below which to fail"),
    ("--shape-warn", "quality_ratio_warn", "face shape quality / first frame, warn below"),
    ("--shape-fail", "quality_ratio_fail", "face shape quality / first frame, fail below"),
    ("--crease-warn", "crease_warn_deg", "angle between neighbouring face normals, degrees"),
    ("--crease-fail", "crease_fail_deg", "angle between neighbouring face normals, degrees"),
    ("--concentration-warn", "concentration_warn", "edge angle / wing edges' mean, warn above"),
    ("--concentration-min", "concentration_min_deg", "smallest angle judged for concentration"),
    ("--fold-warn", "fold_warn", "min n_face . n_vertex at a vertex, -1..1, warn below"),
    ("--fold-fail", "fold_fail", "min n_face . n_vertex at a vertex, -1..1, fail below"),
    ("--bend-warn", "bend_warn", "bend radius / bounding-box diagonal, warn below"),
    ("--bend-fail", "bend_fail", "bend radius / bounding-box diagonal, fail below"),
    ("--jump-warn", "step_warn", "vertex move per frame in local edge lengths, warn above"),
    ("--jump-fail", "step_fail", "vertex move per frame in local edge lengths, fail above"),
    ("--degree-tolerance", "degree_tolerance", "allowed |Gauss-map degree - chi/2|"),
    ("--sphere-tolerance", "sphere_tolerance", "finished eversion: radial deviation / radius"),
)


def add_parser(sub, name: str) -> argparse.ArgumentParser:
    from ..check import Thresholds

    defaults = Thresholds()
    p = sub.add_parser(
        name,
        help="check every frame of a mesh animation for a smooth immersion",
        description="Check every frame of a mesh animation (.npz, an .obj/.ply file, or a "
        "folder of numbered .obj/.ply frames): pinches, creases, folds, tight bends, jumps, "
        "orientation, Gauss-map degree, double curves, triple points and singular points. "
        "Exit code 0 when every frame passes, 1 when some frame fails, 2 for unreadable input.",
    )
    p.add_argument(
        "path", type=Path, help="mesh sequence: FILE.npz, FILE.obj, FILE.ply or a folder"
    )
    p.add_argument("--json", type=Path, default=None, metavar="FILE", help="write the JSON report")
    p.add_argument(
        "--csv", type=Path, default=None, metavar="FILE", help="write the per-frame table"
    )
    p.add_argument(
        "--plot", type=Path, default=None, metavar="FILE.png",
        help="write a PNG of the metrics over frames (needs matplotlib)",
    )  # fmt: skip
    p.add_argument(
        "--no-intersections", action="store_true",
        help="skip double curves and triple points (the slowest part)",
    )  # fmt: skip
    p.add_argument(
        "--quadruple-points", action="store_true",
        help="also find the moments where four sheets meet, between frames (needs the "
        "intersection check)",
    )  # fmt: skip
    p.add_argument(
        "--weld", action="store_true", help="merge coincident vertices (seam duplicates) first"
    )
    p.add_argument(
        "--workers", type=int, default=1,
        help="processes judging frames in parallel, >= 1 (default 1)",
    )  # fmt: skip
    p.add_argument("--quiet", action="store_true", help="no progress bar and no summary")
    g = p.add_argument_group("thresholds (see docs/checker.md for the reasoning)")
    for opt, attr, text in _THRESHOLD_OPTIONS:
        g.add_argument(
            opt, dest=attr, type=float, default=None,
            help=f"{text} (default {getattr(defaults, attr):g})",
        )  # fmt: skip
    p.set_defaults(run=run)
    return p


def _error(msg: str) -> int:
    print(f"turnabout check: error: {msg}", file=sys.stderr)
    return 2


def run(args: argparse.Namespace) -> int:
    from ..check import CheckInputError, ThresholdError, Thresholds, check_animation
    from ..meshseq import MeshSequenceError, read_sequence

    if args.quadruple_points and args.no_intersections:
        return _error("--quadruple-points needs the intersection check: drop --no-intersections")
    names = {f.name for f in fields(Thresholds)}
    overrides = {k: v for k, v in vars(args).items() if k in names and v is not None}
    try:
        thresholds = Thresholds(**overrides)
    except ThresholdError as exc:
        return _error(str(exc))
    try:
        seq = read_sequence(args.path, weld=args.weld)
    except MeshSequenceError as exc:
        return _error(str(exc))
    except OSError as exc:
        return _error(f"{args.path}: cannot read ({exc})")
    bar = ProgressBar("checking frames", seq.n_frames, enabled=not args.quiet)
    try:
        report = check_animation(
            seq.positions,
            seq.triangles(),
            thresholds=thresholds,
            times=seq.times,
            progress=bar,
            intersections=not args.no_intersections,
            workers=args.workers,
            quadruple=args.quadruple_points,
        )
    except CheckInputError as exc:
        bar.close()
        return _error(f"{args.path}: {exc}")
    except Cancelled:
        bar.close()
        print("turnabout check: cancelled", file=sys.stderr)
        return 2
    bar.close()
    try:
        if args.json:
            report.write_json(args.json)
        if args.csv:
            report.write_csv(args.csv)
        if args.plot:
            report.write_plot(args.plot)
    except (OSError, RuntimeError) as exc:
        return _error(str(exc))
    failing = report.failing_frames()
    if not args.quiet:
        t = report.topology
        print(
            f"{args.path}: {seq.n_frames} frame(s), {seq.n_vertices} vertices, "
            f"{t.n_faces} triangles, chi = {t.euler_characteristic}, "
            f"{'orientable' if t.orientable else 'non-orientable'}"
        )
        for reason in report.reasons:
            print(f"  {reason}")
        if failing:
            worst = report.frames[report.worst_frame]
            x, y, z = worst.worst_position
            print(
                f"  worst frame {worst.frame}: {worst.reasons[0] if worst.reasons else ''} "
                f"near ({x:.4g}, {y:.4g}, {z:.4g})"
            )
            shown = ", ".join(str(f) for f in failing[:20]) + (" ..." if len(failing) > 20 else "")
            print(f"  failing frames: {shown}")
        q = report.quadruple_points
        if q is not None:
            print(f"  quadruple points: {q.count}"
                  + ("" if q.general_position else " (not in general position)"))  # fmt: skip
            for k in range(min(q.count, 10)):
                x, y, z = q.position[k]
                print(f"    frame {q.time[k]:.4f} at ({x:.4g}, {y:.4g}, {z:.4g}), "
                      f"faces {', '.join(str(int(f)) for f in q.faces[k])}")  # fmt: skip
            for note in q.notes:
                print(f"    {note}")
        print(f"verdict: {report.verdict}; everted: {'yes' if report.everted else 'no'}")
    return 1 if failing else 0
