"""``turnabout check``: judge every frame of a mesh animation file.

Exit codes: 0 every frame passes (ok or warn), 1 some frame fails, 2 unreadable input, bad
options or an output that cannot be written, 130 cancelled.
"""

from __future__ import annotations

import argparse
import contextlib
import re
import sys
from dataclasses import fields
from pathlib import Path

from .. import cluster
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
        "Exit code 0 when every frame passes, 1 when some frame fails, 2 for unreadable input, "
        "bad options or an output that cannot be written, 130 when cancelled.",
    )
    p.add_argument(
        "path", type=Path, help="mesh sequence: FILE.npz, FILE.obj, FILE.ply or a folder"
    )
    p.add_argument(
        "--json", default=None, metavar="FILE", help="write the JSON report ('-': standard output)"
    )
    p.add_argument(
        "--csv",
        default=None,
        metavar="FILE",
        help="write the per-frame table ('-': standard output)",
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
    p.add_argument(
        "--scheduler", default=None, metavar="ADDRESS",
        help="judge chunks of frames on a Dask cluster instead: HOST:PORT or tcp://HOST:PORT "
        "of a running scheduler, or local:N to start N worker processes here (needs the "
        "'sweep' extra); the report is the same as a local run's",
    )  # fmt: skip
    p.add_argument(
        "--up", default="0,0,1", metavar="X,Y,Z",
        help="up direction for the level points (domes, bowls, saddles facing up), any "
        "non-zero length (default 0,0,1); write a leading minus as --up=-1,0,0",
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


def _option_words(message: str) -> str:
    """A threshold message with the user's option names (--area-warn, not area_ratio_warn)."""
    table = {attr: opt for opt, attr, _ in _THRESHOLD_OPTIONS}
    pattern = re.compile(r"\b(" + "|".join(sorted(table, key=len, reverse=True)) + r")\b")
    return pattern.sub(lambda m: table[m.group(1)], message)


def _check_outputs(args) -> None:
    """Every output path, checked before the work starts (raises OutputError)."""
    from ..output import STDOUT, OutputError, check_output_file, check_suffix

    if args.json == STDOUT and args.csv == STDOUT:
        raise OutputError("--json - and --csv -: only one report can go to standard output")
    if args.json is not None:
        check_output_file(args.json, "--json", allow_stdout=True)
    if args.csv is not None:
        check_output_file(args.csv, "--csv", allow_stdout=True)
    if args.plot is not None:
        check_suffix(args.plot, (".png",), "--plot", "the plot")
        check_output_file(args.plot, "--plot")
        try:
            import matplotlib  # noqa: F401
        except ImportError:
            raise OutputError(
                "--plot: plots need matplotlib: install the 'plot' extra "
                "(pip install 'turnabout[plot]')"
            ) from None


def _parse_up(text: str) -> tuple[float, float, float] | str:
    """The unit vector of ``--up X,Y,Z``, or an error message naming the option."""
    from ..views.levels import LevelPointError, up_from_text

    try:
        return up_from_text(text, "--up")
    except LevelPointError as exc:
        return str(exc)


def run(args: argparse.Namespace) -> int:
    from ..check import CheckInputError, ThresholdError, Thresholds, check_animation
    from ..meshfiles import read_sequence
    from ..meshfiles.model import MeshSequenceError
    from ..output import STDOUT, OutputError
    from ..views.levels import level_count_table

    up = _parse_up(args.up)
    if isinstance(up, str):
        return _error(up)

    if args.quadruple_points and args.no_intersections:
        return _error("--quadruple-points needs the intersection check: drop --no-intersections")
    names = {f.name for f in fields(Thresholds)}
    overrides = {k: v for k, v in vars(args).items() if k in names and v is not None}
    try:
        thresholds = Thresholds(**overrides)
    except ThresholdError as exc:
        return _error(_option_words(str(exc)))
    if args.workers < 1:
        return _error(f"--workers: must be 1 or more, got {args.workers}")
    try:
        _check_outputs(args)
        if args.scheduler is not None:
            cluster.parse_scheduler(args.scheduler)
            cluster.require_dask()
    except (OutputError, cluster.SchedulerError) as exc:
        return _error(str(exc))
    try:
        seq = read_sequence(args.path, weld=args.weld)
    except MeshSequenceError as exc:
        return _error(str(exc))
    except OSError as exc:
        return _error(f"{args.path}: cannot read ({exc})")
    bar = ProgressBar("checking frames", seq.n_frames, enabled=not args.quiet)
    qbar = ProgressBar("quadruple points", seq.n_frames - 1,
                       enabled=args.quadruple_points and not args.quiet)  # fmt: skip
    dask = cluster.dask_client(args.scheduler) if args.scheduler else contextlib.nullcontext()
    try:
        with dask as client:
            report = check_animation(
                seq.positions,
                seq.triangles(),
                thresholds=thresholds,
                times=seq.times,
                progress=bar,
                intersections=not args.no_intersections,
                workers=args.workers,
                level_counts=level_count_table(up),
                level_up=up,
                quadruple=args.quadruple_points,
                client=client,
                quadruple_progress=qbar,
            )
    except cluster.SchedulerError as exc:
        bar.close(), qbar.close()
        return _error(str(exc))
    except CheckInputError as exc:
        bar.close(), qbar.close()
        return _error(f"{args.path}: {exc}")
    except Cancelled:
        bar.close(), qbar.close()
        print("turnabout check: cancelled", file=sys.stderr)
        return 130
    bar.close(), qbar.close()
    try:
        if args.json:
            report.write_json(args.json)
        if args.csv:
            report.write_csv(args.csv)
        if args.plot:
            report.write_plot(args.plot)
    except (OSError, ValueError, RuntimeError) as exc:
        return _error(str(exc))
    # with a report on standard output, that report is the whole output (no summary)
    quiet = args.quiet or STDOUT in (args.json, args.csv)
    failing = report.failing_frames()
    if not quiet:
        t = report.topology
        print(
            f"{args.path}: {seq.n_frames} frame(s), {seq.n_vertices} vertices, "
            f"{t.n_faces} triangles, chi = {t.euler_characteristic}, "
            f"{'orientable' if t.orientable else 'non-orientable'}"
        )
        for line in report.summary_lines():
            print(line)
        signed = [f.level_signed_count for f in report.frames]
        if report.level_up is not None and None not in signed:
            off = sum(2 * n != t.euler_characteristic for n in signed)
            lo, hi = min(signed), max(signed)
            print(
                f"  level points (up {', '.join(f'{v:.3g}' for v in report.level_up)}): "
                f"domes + bowls - saddles = {lo if lo == hi else f'{lo}..{hi}'}, chi/2 = "
                f"{t.euler_characteristic / 2:g}" + (f", differs in {off} frame(s)" if off else "")
            )
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
