"""``turnabout build``: bake the corrugated eversion to .npz, OBJ frames or PLY frames."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from ..eversion import (
    DEFAULT_FRAMES,
    STAGE_HELP,
    STAGE_NAMES,
    ControlError,
    Controls,
    build,
    default_frames,
    default_mesh,
)
from ..eversion.controls import MAX_STRIPS, MIN_STRIPS, depth_range
from ..eversion.regularity import QUICK_GRID
from ..eversion.spacing import CREASE_AIM_DEG, EVEN_PER_STRIP, EVEN_RINGS, SPACINGS
from ..progress import Cancelled, ProgressBar


def _window(text: str) -> tuple[float, float]:
    parts = text.replace(":", ",").split(",")
    if len(parts) != 2:
        raise argparse.ArgumentTypeError(
            f"expected START,END (fractions of the motion), got {text!r}"
        )
    try:
        return float(parts[0]), float(parts[1])
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected two numbers START,END, got {text!r}") from None


def add_parser(sub, name: str) -> argparse.ArgumentParser:
    lo, hi = depth_range(MIN_STRIPS)
    d = Controls()
    p = sub.add_parser(
        name,
        help="bake the corrugated sphere eversion",
        description="Bake the corrugated sphere eversion (Thurston's corrugation method) "
        "and write it as .npz, a folder of OBJ frames, or a folder of PLY frames.",
    )
    p.add_argument(
        "--strips",
        type=int,
        default=d.strips,
        help=f"number of guide strips (n-fold symmetry), integer {MIN_STRIPS}-{MAX_STRIPS} "
        f"(default {d.strips})",
    )
    p.add_argument(
        "--depth",
        type=float,
        default=None,
        help=f"corrugation depth as a fraction of the sphere's radius, {lo:g}-{hi:g} "
        f"(default {d.wave_depth:g})",
    )
    for stage in STAGE_NAMES:
        a, b = d.timing[stage]
        p.add_argument(
            f"--{stage}",
            type=_window,
            default=None,
            metavar="START,END",
            help=f"when {STAGE_HELP[stage]}: fractions of the motion in [0, 1] "
            f"(default {a:g},{b:g})",
        )
    p.add_argument(
        "--frames",
        type=int,
        default=None,
        help=f"number of frames, >= 2 (default {DEFAULT_FRAMES} for 8 strips, 20 s at 24 fps; "
        f"more strips need more, up to {default_frames(16)} for 16, to keep every vertex "
        "within one edge length per frame)",
    )
    p.add_argument(
        "--spacing",
        choices=SPACINGS,
        default="bend",
        help="where the mesh puts its vertices: 'bend' where the surface bends, as many as "
        f"keep neighbouring faces within about {CREASE_AIM_DEG:g} deg in every frame; 'even' "
        f"a plain grid ({EVEN_PER_STRIP} per strip x {EVEN_RINGS} rings) (default bend)",
    )
    p.add_argument(
        "--lon",
        type=int,
        default=None,
        help="longitude samples, a multiple of strips with >= 8 per strip "
        "(default: from --spacing)",
    )
    p.add_argument(
        "--lat",
        type=int,
        default=None,
        help="latitude rings between the poles, >= 16 (default: from --spacing)",
    )
    p.add_argument(
        "--out",
        type=Path,
        default=None,
        help="output: FILE.npz, or a folder for --format obj/ply (default eversion.npz)",
    )
    p.add_argument(
        "--format",
        choices=("npz", "obj", "ply"),
        default=None,
        help="output format (default: from --out; npz)",
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
        help="grid of --scan-only (default 720 361 400)",
    )
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(run=run)
    return p


def _controls(args) -> Controls:
    timing = dict(Controls().timing)
    for stage in STAGE_NAMES:
        w = getattr(args, stage)
        if w is not None:
            timing[stage] = w
    return Controls(strips=args.strips, depth=args.depth, timing=timing)


def run(args) -> int:
    try:
        controls = _controls(args)
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
        mesh = default_mesh(controls, args.lon, args.lat, spacing=args.spacing)
        fmt = args.format or (
            "npz"
            if args.out is None or args.out.suffix == ".npz"
            else "ply"
            if args.out.suffix == ".ply"
            else "obj"
        )
        out = args.out or Path("eversion.npz")
        frames = default_frames(controls.strips) if args.frames is None else args.frames
        with ProgressBar("building", max(int(frames), 1), enabled=not args.quiet) as bar:
            ev = build(controls, frames=frames, mesh=mesh, progress=bar)
    except ControlError as exc:
        print(f"turnabout build: {exc}", file=sys.stderr)
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
        path = out.with_suffix("") if out.suffix == ".ply" else out
        meshseq.write_ply_sequence(path, ev.positions, ev.faces)
    print(f"wrote {ev.positions.shape[0]} frames x {ev.positions.shape[1]} vertices to {path}")
    return 0
