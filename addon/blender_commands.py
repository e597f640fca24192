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

from turnabout.commands.controls_options import (
    add_control_options,
    control_error_text,
    read_controls,
)

from .view_options import add_view_options, read_view_options

HELP = {
    "scene": "write a ready .blend: baked eversion, two-sided material, camera and lights",
    "render": "render frames of a .blend to PNG (Cycles on the CPU, or Workbench previews)",
    "demo": "build, check and preview the eversion (default controls unless given) into "
    "./turnabout-demo/",
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


def _add_build_options(p: argparse.ArgumentParser) -> None:
    """The eversion's shared controls (as in ``turnabout build``), then the scene's own."""
    add_control_options(p)
    g = p.add_argument_group("scene")
    g.add_argument("--start", type=int, default=1, help="scene frame where the motion starts")
    g.add_argument(
        "--key-step", type=int, default=1, help="store a shape every N frames, >= 1 (default 1)"
    )
    g.add_argument(
        "--store",
        choices=("shape-keys", "point-cache"),
        default="shape-keys",
        help="shape keys in the .blend, or a PC2 cache file beside it (default shape-keys)",
    )
    g.add_argument(
        "--memory-limit",
        type=float,
        default=4096.0,
        metavar="MB",
        help="refuse bakes estimated above this many megabytes (default 4096)",
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
        help="cycles (CPU, shows both sides' colours) or workbench (fast preview) "
        "(default cycles)",
    )
    p.add_argument(
        "--size",
        type=_pair,
        default=_pair(size),
        metavar="WxH",
        help=f"image size (default {size})",
    )
    p.add_argument(
        "--samples", type=int, default=samples, help=f"Cycles samples per pixel (default {samples})"
    )


def add_parser(subparsers, name: str):
    p = subparsers.add_parser(name, help=HELP[name], description=HELP[name])
    if name == "scene":
        p.add_argument("output", help="the .blend file to write")
        _add_build_options(p)
        _add_render_options(p, "640x480", 64)
        add_view_options(p)
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
        p.add_argument(
            "--side-by-side",
            action="store_true",
            help="render the band camera's top view and the side view next to each other "
            "(a file made with --slices; each image is twice the width)",
        )
        p.set_defaults(run=run_render)
    elif name == "demo":
        p.add_argument(
            "--out",
            default="turnabout-demo",
            help="output folder, made if missing; its parent must exist (default ./turnabout-demo)",
        )
        add_control_options(p)
        p.add_argument(
            "--previews",
            type=int,
            default=4,
            help="preview frames to render, 0 for none (default 4)",
        )
        _add_render_options(p, "240x180", 12)
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
            "blender -b -P tools/run_in_blender.py -- " + name,
            file=sys.stderr,
        )
        return False
    return True


def _choice(args):
    """The checked controls and mesh counts (ControlError before any work)."""
    return read_controls(args)


def _mesh(choice):
    from turnabout.eversion import mesh_for

    return mesh_for(choice.controls, choice.lon, choice.lat, spacing=choice.spacing)


def _fail(name: str, exc: Exception) -> int:
    from turnabout.eversion import ControlError

    text = control_error_text(exc) if isinstance(exc, ControlError) else str(exc)
    print(f"turnabout {name}: {text}", file=sys.stderr)
    return 2


def _check_scene_options(args, blend: str) -> None:
    """Everything of ``scene`` that can be checked before the scan and the bake."""
    from turnabout.output import check_output_file, check_suffix

    from . import headless

    check_suffix(blend, (".blend",), "output", "the scene file")
    check_output_file(blend, "output")
    if args.key_step < 1:
        raise headless.HeadlessError(f"--key-step: must be 1 or more, got {args.key_step}")
    if not args.memory_limit > 0:
        raise headless.HeadlessError(f"--memory-limit: must be above 0, got {args.memory_limit}")
    headless.check_render_settings(args.engine, args.size, args.samples)


def run_scene(args) -> int:
    if not _bpy_or_message("scene"):
        return 2
    from turnabout.progress import ProgressBar

    from . import headless, view_wiring
    from .props import INNER_COLOUR, OUTER_COLOUR

    try:
        choice = _choice(args)
        views = read_view_options(args, choice.controls.strips)
        out = args.output
        _check_scene_options(args, out)
        out = os.path.abspath(out)
        mesh = _mesh(choice)
        look = headless.look_settings(
            args.outer or OUTER_COLOUR, args.inner or INNER_COLOUR, args.tint_strips
        )
        mode = "POINT_CACHE" if args.store == "point-cache" else "SHAPE_KEYS"
        with ProgressBar("baking", 1, enabled=not args.quiet) as bar:
            ob = headless.build_scene(
                choice.controls,
                choice.frames,
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
                spacing=choice.spacing,
            )
        headless.point_cache_relative(ob, out)
        view_wiring.apply_view_request(ob.users_scene[0], ob, views, args.size)
        headless.save_blend(out)
    except (ValueError, OSError) as exc:
        return _fail("scene", exc)
    print(f"wrote {out}")
    return 0


def run_render(args) -> int:
    if not _bpy_or_message("render"):
        return 2
    import bpy

    from turnabout.frame_ranges import parse_frames
    from turnabout.output import check_output_folder
    from turnabout.progress import ProgressBar

    from . import headless

    try:
        check_output_folder(args.out_dir, "out_dir")
        headless.check_render_settings(args.engine, args.size, args.samples)
        headless.open_blend(args.blend)
        scene = bpy.context.scene
        frames = parse_frames(args.frames, (scene.frame_start, scene.frame_end))
        render_one = None
        if args.side_by_side:
            from . import view_rigs

            try:  # refused here, before any render
                cameras = view_rigs.find_band_cameras(scene)
            except view_rigs.RigError as exc:
                raise headless.HeadlessError(
                    f"--side-by-side: {exc}; make the file with "
                    "'turnabout scene FILE --slices COUNT --slice WHICH'"
                ) from None

            def render_one(path, frame):
                view_rigs.render_side_by_side(scene, path, frame, cameras=cameras)

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
                render_one=render_one,
            )
    except (ValueError, OSError, RuntimeError) as exc:
        return _fail("render", exc)
    print(
        f"rendered {len(done)} frames, skipped {len(skipped)} already on disk, into "
        f"{os.path.abspath(args.out_dir)} ({time.perf_counter() - t0:.1f} s)"
    )
    return 0


# Cost of one unit of each phase relative to checking one frame, from a measured default
# demo (480 frames baked in 7 s, read and checked with double curves in two processes in
# 1131 s, four 240x180 Cycles previews in 2 s, on a busy two-core machine); they make the
# bar follow the work rather than count steps.
_DEMO_COST = {"bake": 0.01, "read": 0.005, "check": 1.0, "preview": 0.25}
# A mid-motion frame (waves at full depth, the turn under way) holds hundreds of triple
# points and costs about ten times a frame near either end to check.
_MID_MOTION_COST = 9.0


def check_cost_per_frame(controls, n_frames: int) -> np.ndarray:
    """Relative cost of checking each frame of the eversion, (n_frames,) float64, sum 1."""
    from turnabout.eversion import construction

    t = np.linspace(0.0, 1.0, n_frames)
    states = [construction.stage_state(controls, float(x)) for x in t]
    mid = np.array([s.waves * np.sin(np.pi * s.turn) ** 2 for s in states])
    w = 1.0 + _MID_MOTION_COST * mid
    return w / w.sum()


class _DemoProgress:
    """One bar over the demo's phases, each weighted by what it costs."""

    def __init__(self, bar, frames: int, previews: int, check_cost: np.ndarray):
        self.bar = bar
        units = {
            "bake": _DEMO_COST["bake"] * frames,
            "read": _DEMO_COST["read"] * frames,
            "check": _DEMO_COST["check"] * frames,
            "preview": _DEMO_COST["preview"] * previews,
        }
        total = sum(units.values())
        self.share = {k: v / total for k, v in units.items()}
        order = ("bake", "read", "check", "preview")
        self.offset = {k: sum(self.share[o] for o in order[: order.index(k)]) for k in order}
        self.cum_check = np.concatenate([[0.0], np.cumsum(check_cost)])
        self.steps = 1000

    def __call__(self, phase: str, done: int, total: int) -> None:
        if phase == "check":
            frac = self.cum_check[min(done, self.cum_check.size - 1)] / self.cum_check[-1]
        else:
            frac = done / max(total, 1)
        f = self.offset[phase] + self.share[phase] * min(max(frac, 0.0), 1.0)
        self.bar(int(round(self.steps * f)), self.steps)


def run_demo(args) -> int:
    if not _bpy_or_message("demo"):
        return 2
    import bpy

    from turnabout.output import make_output_folder
    from turnabout.progress import ProgressBar

    from . import check_objects, headless

    out_dir = os.path.abspath(args.out)
    blend = os.path.join(out_dir, "eversion.blend")
    t0 = time.perf_counter()
    phase_s: dict[str, float] = {}
    try:  # every option and the output folder before any work
        choice = _choice(args)
        if args.previews < 0:
            raise headless.HeadlessError(f"--previews: must be 0 or more, got {args.previews}")
        headless.check_render_settings(args.engine, args.size, args.samples)
        make_output_folder(args.out, "--out")
        controls = choice.controls
        frames = choice.frame_count
        mesh = _mesh(choice)
        weights = check_cost_per_frame(controls, frames)
        with ProgressBar("demo", 1000, enabled=not args.quiet) as bar:
            step = _DemoProgress(bar, frames, args.previews, weights)
            t = time.perf_counter()
            ob = headless.build_scene(
                controls,
                frames,
                1,
                1,
                mesh,
                engine=args.engine,
                size=args.size,
                samples=args.samples,
                progress=lambda d, n: step("bake", d, n),
                spacing=choice.spacing,
            )
            phase_s["bake"] = time.perf_counter() - t
            scene = bpy.context.scene
            steps = check_objects.check_steps(
                bpy.context,
                ob,
                scene.frame_start,
                scene.frame_end,
                out_dir,
                True,
                stem="eversion",
                workers=max(1, min(2, os.cpu_count() or 1)),
            )
            names = {"reading frames": "read", "checking": "check", "writing": "check"}
            t = time.perf_counter()
            outcome = check_objects.run_to_completion(
                steps, lambda st, d, n: step(names[st], d if st != "writing" else frames, n)
            )
            phase_s["check"] = time.perf_counter() - t
            check_objects.apply_outcome(bpy.context, ob, outcome, scene.turnabout)
            headless.save_blend(blend)
            previews = []
            t = time.perf_counter()
            if args.previews:
                picks = np.unique(
                    np.linspace(scene.frame_start, scene.frame_end, args.previews)
                    .round()
                    .astype(int)
                )
                previews, _ = headless.render_frames(
                    scene,
                    os.path.join(out_dir, "preview"),
                    [int(f) for f in picks],
                    resume=False,
                    progress=lambda d, n: step("preview", d, n),
                )
            phase_s["previews"] = time.perf_counter() - t
    except (ValueError, OSError, RuntimeError) as exc:
        return _fail("demo", exc)
    report = outcome.report
    times = ", ".join(f"{k} {v:.0f} s" for k, v in phase_s.items())
    print(f"demo written to {out_dir} in {time.perf_counter() - t0:.0f} s ({times})")
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
    failing = report.failing_frames()
    print(
        f"  verdict:  {report.verdict} ({len(failing)} failing frames, "
        f"{len(report.noted_frames())} noted, of {len(outcome.frames)})"
    )
    return 1 if failing else 0


def main(argv: list[str] | None = None) -> int:
    """Entry point for ``blender -b -P tools/run_in_blender.py -- COMMAND ...``."""
    parser = argparse.ArgumentParser(prog="turnabout", description="Turnabout's Blender commands.")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name in HELP:
        add_parser(sub, name)
    args = parser.parse_args(sys.argv[1:] if argv is None else argv)
    if not getattr(args, "run", None):
        parser.print_help()
        return 2
    try:
        return int(args.run(args) or 0)
    except KeyboardInterrupt:  # the same exit code as turnabout.cli (README, "Exit codes")
        print(f"\nturnabout {args.command}: cancelled", file=sys.stderr)
        return 130
