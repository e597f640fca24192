"""The eversion's controls as command-line options: one set of names and syntaxes, defined once.

``turnabout build``, ``turnabout scene`` and ``turnabout demo`` all call
:func:`add_control_options` and :func:`read_controls`, so a control has the same option, the
same syntax and the same help (with the default that really applies) in every command. The
add-on's panel labels come from :data:`PANEL_LABELS`, the same words.

==========  =====================  =========================================================
control     option                 syntax
==========  =====================  =========================================================
strips      ``--strips N``         integer, MIN_STRIPS-MAX_STRIPS
depth       ``--depth D``          fraction of the radius, in :func:`depth_range`
<stage>     ``--<stage> START,END``  fractions of the motion, e.g. ``--tuck 0.6,0.9``
frames      ``--frames N``         integer >= 2
spacing     ``--spacing bend|even``
lon         ``--lon N``            longitude samples, a multiple of strips, >= 8 per strip
lat         ``--lat N``            latitude rings between the poles, >= 16
==========  =====================  =========================================================

Everything here is checked by :func:`read_controls` before any scan or bake starts; the
mesh's counts are checked too (without the scan), so a refusal costs no work.
"""

from __future__ import annotations

import argparse
from dataclasses import dataclass

from ..eversion.controls import (
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
from ..eversion.spacing import (
    CREASE_AIM_DEG,
    EVEN_PER_STRIP,
    EVEN_RINGS,
    MIN_LAT_RINGS,
    MIN_SAMPLES_PER_WAVE,
    SPACINGS,
    check_mesh_request,
)

# The panel's label of each control (addon/props.py uses these): the option's own word.
PANEL_LABELS: dict[str, str] = {
    "strips": "Strips",
    "depth": "Depth",
    "frames": "Frames",
    "spacing": "Spacing",
    "lon": "Lon",
    "lat": "Lat",
    **{stage: stage.capitalize() for stage in STAGE_NAMES},
}


def depth_default_text() -> str:
    """'0.16 for 8-9 strips, 0.15 for 10-16 strips' from the core's own table (runs of
    consecutive strip counts with the same depth)."""
    runs: list[tuple[float, int, int]] = []
    for s in range(MIN_STRIPS, MAX_STRIPS + 1):
        d = default_depth(s)
        if runs and runs[-1][0] == d:
            runs[-1] = (d, runs[-1][1], s)
        else:
            runs.append((d, s, s))
    return ", ".join(f"{d:g} for {a} strips" if a == b else f"{d:g} for {a}-{b} strips"
                     for d, a, b in runs)  # fmt: skip


def _window_default_text(stage: str) -> str:
    """'0,0.103' when every strip count has the same window, else the 8 strips' one and a
    pointer to the rest (from the core's tuned table)."""
    wins = {s: default_timing(s)[stage] for s in range(MIN_STRIPS, MAX_STRIPS + 1)}
    a, b = wins[MIN_STRIPS]
    if len(set(wins.values())) == 1:
        return f"{a:g},{b:g}"
    return f"{a:g},{b:g} for {MIN_STRIPS} strips; other counts have their own (docs/eversion.md, 8)"


def stage_window(text: str) -> tuple[float, float]:
    """Parse a stage window ``START,END`` (fractions of the motion)."""
    parts = text.split(",")
    if len(parts) != 2:
        raise argparse.ArgumentTypeError(
            f"expected START,END (two fractions of the motion, e.g. 0.6,0.9), got {text!r}"
        )
    try:
        return float(parts[0]), float(parts[1])
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected two numbers START,END (e.g. 0.6,0.9), got {text!r}"
        ) from None


def add_control_options(p: argparse.ArgumentParser) -> None:
    """Add --strips, --depth, --<stage>, --frames, --spacing, --lon, --lat to a parser."""
    lo, hi = depth_range()
    d = Controls()
    g = p.add_argument_group("eversion controls (the same in build, scene, demo and the panel)")
    g.add_argument(
        "--strips",
        type=int,
        default=d.strips,
        help=f"number of guide strips (n-fold symmetry), integer {MIN_STRIPS}-{MAX_STRIPS} "
        f"(default {d.strips})",
    )
    g.add_argument(
        "--depth",
        type=float,
        default=None,
        help=f"corrugation depth as a fraction of the sphere's radius, {lo:g}-{hi:g} "
        f"(default: {depth_default_text()})",
    )
    for stage in STAGE_NAMES:
        g.add_argument(
            f"--{stage}",
            type=stage_window,
            default=None,
            metavar="START,END",
            help=f"when {STAGE_HELP[stage]}: fractions of the motion in [0, 1] "
            f"(default {_window_default_text(stage)})",
        )
    frames = [default_frames(n) for n in range(MIN_STRIPS, MAX_STRIPS + 1)]
    g.add_argument(
        "--frames",
        type=int,
        default=None,
        help=f"length of the motion in frames, >= 2 (default: the strip count's tuned count, "
        f"{default_frames(MIN_STRIPS)} for {MIN_STRIPS} strips, "
        f"{default_frames(MIN_STRIPS) / 24:g} s at 24 fps; {min(frames)}-{max(frames)} for "
        f"{MIN_STRIPS}-{MAX_STRIPS} strips, {default_frames(MAX_STRIPS)} for {MAX_STRIPS}; "
        "enough to keep every vertex within one edge length per frame)",
    )
    g.add_argument(
        "--spacing",
        choices=SPACINGS,
        default="bend",
        help="where the mesh puts its vertices: 'bend' where the surface bends, as many as "
        f"keep neighbouring faces within about {CREASE_AIM_DEG:g} deg in every frame; 'even' "
        f"a plain grid ({EVEN_PER_STRIP} per strip x {EVEN_RINGS} rings) (default bend)",
    )
    g.add_argument(
        "--lon",
        type=int,
        default=None,
        help="longitude samples around each ring, a multiple of --strips with at least "
        f"{MIN_SAMPLES_PER_WAVE} per strip (default: from --spacing)",
    )
    g.add_argument(
        "--lat",
        type=int,
        default=None,
        help=f"latitude rings between the poles, at least {MIN_LAT_RINGS} "
        "(default: from --spacing)",
    )


@dataclass(frozen=True)
class ControlChoice:
    """What the control options asked for, every value checked.

    frames, lon, lat : None where the default for the strip count / spacing applies.
    """

    controls: Controls
    frames: int | None
    spacing: str
    lon: int | None
    lat: int | None

    @property
    def frame_count(self) -> int:
        return default_frames(self.controls.strips) if self.frames is None else self.frames


def read_controls(args: argparse.Namespace) -> ControlChoice:
    """Controls, frames and mesh counts from parsed options; raises :class:`ControlError`.

    Checks every value that can be checked without the regularity scan (strips, depth,
    windows, frames, spacing, lon and lat), so a refusal comes before any work.
    """
    given = {s: getattr(args, s) for s in STAGE_NAMES if getattr(args, s, None) is not None}
    # windows not given are the chosen strip count's defaults (Controls(strips=...) checks
    # the count first, so a bad --strips is named before any window)
    timing = {**Controls(strips=args.strips).timing, **given} if given else None
    controls = Controls(strips=args.strips, depth=args.depth, timing=timing)
    frames = args.frames
    if frames is not None and frames < 2:
        raise ControlError("frames", f"must be an integer >= 2, got {frames}")
    check_mesh_request(controls, args.spacing, args.lon, args.lat)
    return ControlChoice(controls, frames, args.spacing, args.lon, args.lat)


def option_name(control: str) -> str:
    """The command-line spelling of a control named in a :class:`ControlError`."""
    if control in ("lon x lat",):
        return "--lon/--lat"
    head = control.split()[0]
    known = {"strips", "depth", "frames", "spacing", "lon", "lat", *STAGE_NAMES}
    return f"--{head}" if head in known else control


def control_error_text(exc: ControlError) -> str:
    """The error with the user's option name: ``--lon: must be ...``."""
    return f"{option_name(exc.option)}: {exc.message}"
