"""The Blender-side commands of the ``turnabout`` command line: ``scene``, ``render``, ``demo``.

Importing this module does not import Blender; each command does when it runs, and
says how to install the bpy module when it is missing.
"""

from __future__ import annotations

import argparse
import os
import sys
import time

import numpy as np
from turnabout.eversion.controls import DEFAULT_FRAMES
from turnabout.eversion.spacing import SPACINGS

HELP = {
    "scene": "write a ready .blend: baked eversion, two-sided material, camera and lights",
    "render": "render frames of a .blend to PNG (Cycles on the CPU, or Workbench previews)",
    "demo": "build, check and preview the default eversion into ./turnabout-demo/",
}


def _rgb(text: str):
    try:
        parts = [float(p) for p in text.split(",")]
    except ValueError:
        raise argparse.ArgumentTypeError(f"colour must be R,G,B in 0-1, got {text!r}") from None
    if len(parts) != 3 or not all(0.0 <= p <= 1.0 for p in parts):
        raise argparse.ArgumentTypeError(f"colour must be three numbers R,G,B in 0-1, got {text!r}")
    return (*parts, 1.0)


def _pair(text: str):
    try:
        a, b = (int(p) for p in text.lower().split("x"))
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected WIDTHxHEIGHT such as 320x240, got {text!r}"
        ) from None
    return a, b


def _timing(text: str):
    try:
        stage, window = text.split("=")
        a, b = (float(p) for p in window.split(":"))
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"timing must look like STAGE=START:END (e.g. swap=0.1:0.4), got {text!r}"
        ) from None
    return stage.strip(), (a, b)


def _add_build_options(p: argparse.ArgumentParser) -> None:
    from turnabout.eversion import MAX_STRIPS, MIN_STRIPS, STAGE_NAMES

    g = p.add_argument_group("construction")
    g.add_argument(
        "--strips",
        type=int,
        default=MIN_STRIPS,
        help=f"guide strips, the symmetry order ({MIN_STRIPS}-{MAX_STRIPS})",
    )
    g.add_argument(
        "--depth",
        type=float,
        default=None,
        help="corrugation depth as a fraction of the radius (default: documented for the strips)",
    )
    g.add_argument(
        "--timing",
        type=_timing,
        action="append",
        default=[],
        metavar="STAGE=START:END",
        help=f"a stage's window as fractions of the motion; stages: {', '.join(STAGE_NAMES)}",
    )
    g.add_argument(
        "--frames",
        type=int,
        default=None,
        help=f"length of the motion in frames (>= 2; default {DEFAULT_FRAMES} for 8 strips, "
        "more for more strips: see turnabout build --help)",
    )
    g.add_argument("--start", type=int, default=1, help="scene frame where the motion starts")
    g.add_argument("--key-step", type=int, default=1, help="store a shape every N frames (>= 1)")
    g.add_argument(
        "--mesh",
        type=_pair,
        default=None,
        metavar="AROUNDxRINGS",
        help="sphere resolution, e.g. 256x127 (default: the spacing's own)",
    )
    g.add_argument(
        "--spacing",
        choices=SPACINGS,
        default="bend",
        help="where the mesh puts its vertices: where the surface bends (default) or an even grid",
    )
    g.add_argument(
        "--store",
        choices=("shape-keys", "point-cache"),
        default="shape-keys",
        help="shape keys in the .blend, or a PC2 cache file beside it",
    )
    g.add_argument(
        "--memory-limit",
        type=float,
        default=4096.0,
        metavar="MB",
        help="refuse bakes estimated above this many megabytes",
    )
    g = p.add_argument_group("look")
    g.add_argument("--outer", type=_rgb, default=None, metavar="R,G,B", help="outer side colour")
    g.add_argument("--inner", type=_rgb, default=None, metavar="R,G,B", help="inner side colour")
    g.add_argument("--tint-strips", action="store_true", help="tint every other strip")


def _add_render_options(p: argparse.ArgumentParser, size: str, samples: int) -> None:
    p.add_argument(
        "--engine",
        choices=("cycles", "workbench"),
        default="cycles",
        help="cycles (CPU, shows both sides' colours) or workbench (fast preview)",
    )
    p.add_argument(
        "--size",
        type=_pair,
        default=_pair(size),
        metavar="WxH",
        help=f"image size (default {size})",
    )
    p.add_argument("--samples", type=int, default=samples, help="Cycles samples per pixel")


def add_parser(subparsers, name: str):
    p = subparsers.add_parser(name, help=HELP[name], description=HELP[name])
    if name == "scene":
        p.add_argument("output", help="the .blend file to write")
        _add_build_options(p)
        _add_render_options(p, "640x480", 64)
        p.set_defaults(run=run_scene)
    elif name == "render":
        p.add_argument("blend", help="the .blend file to render")
        p.add_argument("out_dir", help="folder for frame_NNNN.png images")
        p.add_argument(
            "--frames",
            default=None,
            help="frames such as 1-120, 1,30,60 or 1-120:10 (default: the scene range)",
        )
        p.add_argument(
            "--overwrite",
            action="store_true",
            help="render every frame again (default: skip frames already on disk)",
        )
        _add_render_options(p, "320x240", 16)
        p.add_argument(
            "--keep-settings",
            action="store_true",
            help="use the .blend's own engine, size and samples",
        )
        p.set_defaults(run=run_render)
    elif name == "demo":
        p.add_argument(
            "--out", default="turnabout-demo", help="output folder (default ./turnabout-demo)"
        )
        p.add_argument(
            "--frames",
            type=int,
            default=DEFAULT_FRAMES,
            help=f"length of the motion in frames (default {DEFAULT_FRAMES})",
        )
        p.add_argument(
            "--mesh",
            type=_pair,
            default=None,
            metavar="AROUNDxRINGS",
            help="sphere resolution (default: the construction's own)",
        )
        p.add_argument(
            "--previews", type=int, default=4, help="preview frames to render (0 for none)"
        )
        p.add_argument("--engine", choices=("cycles", "workbench"), default="cycles")
        p.add_argument("--size", type=_pair, default=(240, 180), metavar="WxH")
        p.add_argument("--samples", type=int, default=12)
        p.set_defaults(run=run_demo)
    else:  # pragma: no cover
        raise ValueError(f"unknown Blender command {name!r}")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    return p


def _bpy_or_message(name: str) -> bool:
    try:
        import bpy  # noqa: F401
    except ModuleNotFoundError:
        print(
            f"turnabout {name}: needs Blender as a Python module (Python 3.11): "
            'python3.11 -m pip install -e ".[blender]", or run inside Blender with '
            "blender -b -P addon/run_headless.py -- " + name,
            file=sys.stderr,
        )
        return False
    return True


def _controls(args):
    from turnabout.eversion import Controls

    timing = dict(Controls().timing)
    for stage, window in args.timing:
        if stage not in timing:
            from turnabout.eversion import ControlError

            raise ControlError("timing", f"unknown stage {stage!r}; stages are {', '.join(timing)}")
        timing[stage] = window
    return Controls(strips=args.strips, depth=args.depth, timing=timing)


def _mesh(controls, pair, spacing="bend"):
    from .bake import mesh_from_settings

    n_lon, n_lat = (0, 0) if pair is None else pair
    return mesh_from_settings(controls, n_lon, n_lat, spacing)


def _fail(name: str, exc: Exception) -> int:
    print(f"turnabout {name}: {exc}", file=sys.stderr)
    return 2


def run_scene(args) -> int:
    if not _bpy_or_message("scene"):
        return 2
    from turnabout.progress import ProgressBar

    from . import headless
    from .props import INNER_COLOUR, OUTER_COLOUR

    try:
        controls = _controls(args)
        mesh = _mesh(controls, args.mesh, args.spacing)
        out = os.path.abspath(args.output)
        if not out.lower().endswith(".blend"):
            raise headless.HeadlessError(f"output: {args.output!r} must end in .blend")
        look = headless.look_settings(
            args.outer or OUTER_COLOUR, args.inner or INNER_COLOUR, args.tint_strips
        )
        mode = "POINT_CACHE" if args.store == "point-cache" else "SHAPE_KEYS"
        with ProgressBar("baking", 1, enabled=not args.quiet) as bar:
            ob = headless.build_scene(
                controls,
                args.frames,
                args.start,
                args.key_step,
                mesh,
                mode,
                cache_dir=os.path.join(os.path.dirname(out), "turnabout_cache"),
                memory_limit_mb=args.memory_limit,
                look_options=look,
                engine=args.engine,
                size=args.size,
                samples=args.samples,
                progress=bar,
            )
        headless.point_cache_relative(ob, out)
        headless.save_blend(out)
    except (ValueError, OSError) as exc:
        return _fail("scene", exc)
    print(f"wrote {out}")
    return 0


def run_render(args) -> int:
    if not _bpy_or_message("render"):
        return 2
    import bpy
    from turnabout.progress import ProgressBar

    from . import headless

    try:
        headless.open_blend(args.blend)
        scene = bpy.context.scene
        frames = headless.parse_frames(args.frames, (scene.frame_start, scene.frame_end))
        if not args.keep_settings:
            headless.configure_render(scene, args.engine, args.size, args.samples)
        t0 = time.perf_counter()
        with ProgressBar("rendering", len(frames), enabled=not args.quiet) as bar:
            done, skipped = headless.render_frames(
                scene,
                os.path.abspath(args.out_dir),
                frames,
                resume=not args.overwrite,
                progress=bar,
            )
    except (ValueError, OSError, RuntimeError) as exc:
        return _fail("render", exc)
    print(
        f"rendered {len(done)} frames, skipped {len(skipped)} already on disk, into "
        f"{os.path.abspath(args.out_dir)} ({time.perf_counter() - t0:.1f} s)"
    )
    return 0


def run_demo(args) -> int:
    if not _bpy_or_message("demo"):
        return 2
    import bpy
    from turnabout.eversion import Controls
    from turnabout.progress import ProgressBar

    from . import checking, headless

    out_dir = os.path.abspath(args.out)
    blend = os.path.join(out_dir, "eversion.blend")
    t0 = time.perf_counter()
    try:
        if args.previews < 0:
            raise headless.HeadlessError(f"previews: must be 0 or more, got {args.previews}")
        os.makedirs(out_dir, exist_ok=True)
        checking.ensure_writable(out_dir)
        controls = Controls()
        mesh = _mesh(controls, args.mesh)
        # stages of the bar: bake (2 per frame), read + check (2 per frame), previews
        total = 4 * args.frames + max(args.previews, 0) * 4
        with ProgressBar("demo", total, enabled=not args.quiet) as bar:
            ob = headless.build_scene(
                controls,
                args.frames,
                1,
                1,
                mesh,
                engine=args.engine,
                size=args.size,
                samples=args.samples,
                progress=lambda d, t: bar(d * 2 * args.frames // t, total),
            )
            scene = bpy.context.scene
            offset = {
                "reading frames": 2 * args.frames,
                "checking": 3 * args.frames,
                "writing": 4 * args.frames,
            }
            steps = checking.check_steps(
                bpy.context,
                ob,
                scene.frame_start,
                scene.frame_end,
                out_dir,
                True,
                stem="eversion",
                workers=max(1, min(2, os.cpu_count() or 1)),
            )
            outcome = checking.run_to_completion(
                steps,
                lambda st, d, t: bar(
                    offset[st] + (args.frames * d // max(t, 1) if st != "writing" else 0), total
                ),
            )
            checking.apply_outcome(bpy.context, ob, outcome, scene.turnabout)
            headless.save_blend(blend)
            previews = []
            if args.previews:
                picks = np.unique(
                    np.linspace(scene.frame_start, scene.frame_end, args.previews)
                    .round()
                    .astype(int)
                )
                base = 4 * args.frames
                previews, _ = headless.render_frames(
                    scene,
                    os.path.join(out_dir, "preview"),
                    [int(f) for f in picks],
                    resume=False,
                    progress=lambda d, t: bar(base + 4 * args.previews * d // t, total),
                )
    except (ValueError, OSError, RuntimeError) as exc:
        return _fail("demo", exc)
    report = outcome.report
    print(f"demo written to {out_dir} in {time.perf_counter() - t0:.0f} s")
    print(f"  scene:    {blend}")
    for path in outcome.files:
        print(f"  report:   {path}")
    for w in outcome.warnings:
        print(f"  note:     {w}")
    if previews:
        print(
            f"  previews: {os.path.join(out_dir, 'preview')} "
            f"(frames {', '.join(map(str, previews))})"
        )
    print(
        f"  verdict:  {report.verdict} ({len(report.failing_frames())} failing frames, "
        f"{len(report.noted_frames())} noted, of {len(outcome.frames)})"
    )
    return 0


def main(argv: list[str] | None = None) -> int:
    """Entry point for ``blender -b -P addon/run_headless.py -- COMMAND ...``."""
    parser = argparse.ArgumentParser(prog="turnabout", description="Turnabout's Blender commands.")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name in HELP:
        add_parser(sub, name)
    args = parser.parse_args(sys.argv[1:] if argv is None else argv)
    if not getattr(args, "run", None):
        parser.print_help()
        return 2
    return int(args.run(args) or 0)
