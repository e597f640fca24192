"""``turnabout build``: bake the corrugated eversion to .npz, OBJ frames or PLY frames."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from ..eversion import ControlError, build, mesh_for
from ..eversion.regularity import QUICK_GRID, scan_grid_problem
from ..output import OutputError, check_output_file, check_output_folder, check_suffix
from ..progress import Cancelled, ProgressBar
from .controls_options import add_control_options, control_error_text, read_controls

FORMATS = ("npz", "obj", "ply")


def add_parser(sub, name: str) -> argparse.ArgumentParser:
    p = sub.add_parser(
        name,
        help="bake the corrugated sphere eversion",
        description="Bake the corrugated sphere eversion (Thurston's corrugation method) "
        "and write it as .npz, a folder of OBJ frames, or a folder of PLY frames.",
    )
    add_control_options(p)
    p.add_argument(
        "--out",
        type=Path,
        default=None,
        help="output: FILE.npz, or a folder of numbered frames for --format obj/ply "
        "(default eversion.npz); its parent folder must exist",
    )
    p.add_argument(
        "--format",
        choices=FORMATS,
        default=None,
        help="output format (default: from --out: FILE.npz is npz, a name ending in .ply a "
        "folder of PLY frames, a name ending in .obj or without suffix a folder of OBJ "
        "frames); a name whose suffix disagrees with --format is refused",
    )
    p.add_argument(
        "--scan-only",
        action="store_true",
        help="run the full regularity scan (720 x 361 grid, 400 times) and print the figures; "
        "writes nothing",
    )
    p.add_argument(
        "--scan-grid",
        type=int,
        nargs=3,
        metavar=("THETA", "LAT", "TIMES"),
        default=(720, 361, 400),
        help="grid of --scan-only: longitudes >= 4, latitudes >= 3 (poles included), "
        "times >= 2 (default 720 361 400)",
    )
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(run=run)
    return p


def _output(args) -> tuple[str, Path]:
    """(format, path) of the output; OutputError when they disagree or it cannot be written.

    --format npz needs a name ending in .npz; obj and ply write a folder, whose name must
    not end in .npz or in another format's suffix. Without --format: .npz -> npz, .obj /
    .ply -> a folder of that format, a name without suffix -> a folder of OBJ frames.
    """
    out = args.out or Path("eversion.npz")
    suffix = out.suffix.lower()
    fmt = args.format
    if fmt is None:
        if suffix in ("", ".obj", ".ply", ".npz"):
            fmt = {"": "obj", ".obj": "obj", ".ply": "ply", ".npz": "npz"}[suffix]
        else:
            raise OutputError(
                f"--out {out}: unknown suffix {out.suffix!r}; use FILE.npz, or a folder name "
                "(no suffix, or .obj / .ply) for OBJ / PLY frames, or give --format"
            )
    if fmt == "npz":
        check_suffix(out, (".npz",), "--out", "an npz file")
        check_output_file(out, "--out")
    else:
        if suffix and suffix != f".{fmt}":
            raise OutputError(
                f"--out {out}: --format {fmt} writes a folder of .{fmt} frames; its name must "
                f"have no suffix or end in .{fmt}, not {out.suffix}"
            )
        check_output_folder(out, "--out")
    return fmt, out


def _check_scan_grid(grid) -> None:
    problem = scan_grid_problem(*grid)
    if problem:
        raise OutputError(problem)


def run(args) -> int:
    # every option is checked before the first scan or progress bar
    try:
        choice = read_controls(args)
        controls = choice.controls
        if args.scan_only:
            _check_scan_grid(args.scan_grid)
        else:
            fmt, out = _output(args)
    except ControlError as exc:
        print(f"turnabout build: {control_error_text(exc)}", file=sys.stderr)
        return 2
    except OutputError as exc:
        print(f"turnabout build: {exc}", file=sys.stderr)
        return 2
    try:
        if args.scan_only:
            from ..eversion.regularity import scan

            nt, nl, ns = args.scan_grid
            with ProgressBar("regularity scan", ns, enabled=not args.quiet) as bar:
                rep = scan(controls, n_theta=nt, n_lat=nl, n_times=ns, progress=bar)
            print(rep.summary())
            return 0
        from ..eversion.regularity import quick_report, scan_times

        # the fast scan gates the build and places the default mesh; run it once, visibly
        n_scan = scan_times(controls, QUICK_GRID[2]).size
        with ProgressBar("regularity check", n_scan, enabled=not args.quiet) as bar:
            quick_report(controls, progress=bar)
        mesh = mesh_for(controls, choice.lon, choice.lat, spacing=choice.spacing)
        frames = choice.frame_count
        with ProgressBar("building", frames, enabled=not args.quiet) as bar:
            ev = build(controls, frames=frames, mesh=mesh, progress=bar)
    except ControlError as exc:
        print(f"turnabout build: {control_error_text(exc)}", file=sys.stderr)
        return 2
    except Cancelled:
        print("turnabout build: cancelled", file=sys.stderr)
        return 130
    from .. import meshseq

    if fmt == "npz":
        path = meshseq.write_npz(out, ev.positions, ev.faces, uv=ev.uv, times=ev.times)
    elif fmt == "obj":
        path = out
        meshseq.write_obj_sequence(out, ev.positions, ev.faces, uv=ev.uv)
    else:
        path = out
        meshseq.write_ply_sequence(out, ev.positions, ev.faces)
    print(f"wrote {ev.positions.shape[0]} frames x {ev.positions.shape[1]} vertices to {path}")
    return 0
