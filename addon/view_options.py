"""The views' options, read and checked without Blender: one syntax for panel, CLI and docs.

``turnabout scene`` gets its view options from :func:`add_view_options`; :func:`read_view_options`
checks every one of them against the eversion about to be baked (strip count, frame range)
before any work starts, and :func:`parse_parts` reads the *parts* text that the sidebar's
field uses too.

Parts text: words separated by spaces, their union is shown::

    all                      every face
    guide  | guide:0,2-3     guide strips (all, or these indices, 0 .. strips-1)
    wave   | wave:1          wave strips (the corrugated strips between the guides)
    caps   | caps:south      the caps at the poles (south, north or both)
    tile   | tile:0-3        copies of the fundamental piece under the symmetry
                             (tile alone is copy 0; indices 0 .. 2*strips-1)

Strip and cap words pick faces by part; ``tile`` words pick faces by copy; when both are given
a face must satisfy both (``guide:0 tile`` is the half of guide strip 0 in copy 0).
"""

from __future__ import annotations

import argparse
import math
import re
from dataclasses import dataclass

import numpy as np

CAP_NAMES = ("south", "north")
PART_WORDS = ("all", "guide", "wave", "caps", "tile")
REVEAL_KINDS = ("band", "part")
PARTS_HELP = (
    "all, guide[:I,J], wave[:I,J], caps[:south,north], tile[:I,J] (indices from 0; ranges like 0-3)"
)
# Our default stripe colours: a pale sand and a plum, read apart from both side colours.
STRIPE_A = (0.96, 0.88, 0.70, 1.0)
STRIPE_B = (0.36, 0.16, 0.34, 1.0)
DEFAULT_STRIPE_SPACING = 0.25


class ViewOptionError(ValueError):
    """A view option that cannot be used; the message names it and what is allowed."""


@dataclass(frozen=True)
class PartsChoice:
    """Which faces a parts view keeps.

    parts : (2*strips + 2,) bool, indexed by part label (guide k -> k, wave k -> strips + k,
        south cap -> 2*strips, north cap -> 2*strips + 1)
    tiles : (2*strips,) bool, indexed by copy of the fundamental piece
    """

    strips: int
    parts: np.ndarray
    tiles: np.ndarray
    text: str

    def keeps(self, label: np.ndarray, tile: np.ndarray) -> np.ndarray:
        """(M,) bool: the faces kept, from per-face part labels and tile indices (M,) int."""
        return self.parts[label] & self.tiles[tile]


def _indices(option: str, word: str, items: str, limit: int) -> list[int]:
    out = []
    for item in items.split(","):
        m = re.fullmatch(r"\s*(\d+)\s*(?:-\s*(\d+)\s*)?", item)
        if not m:
            raise ViewOptionError(
                f"{option}: cannot read {item!r} in {word!r}; use indices like 0,2 or ranges 0-3"
            )
        a = int(m.group(1))
        b = int(m.group(2)) if m.group(2) is not None else a
        if b < a:
            raise ViewOptionError(f"{option}: range {item.strip()!r} in {word!r} is empty")
        if b >= limit:
            raise ViewOptionError(
                f"{option}: {word.split(':')[0]} index {b} is out of range; "
                f"this eversion has indices 0-{limit - 1}"
            )
        out.extend(range(a, b + 1))
    return out


def parse_parts(text, strips: int, option: str = "parts") -> PartsChoice:
    """Read the parts text (a string, or a list of words) for an eversion of ``strips`` strips."""
    words = text.split() if isinstance(text, str) else [w for t in text for w in str(t).split()]
    if not words:
        raise ViewOptionError(f"{option}: give at least one of {PARTS_HELP}")
    n = int(strips)
    parts = np.zeros(2 * n + 2, bool)
    tiles = np.zeros(2 * n, bool)
    any_part = any_tile = False
    for word in words:
        head, _, rest = word.lower().partition(":")
        if head not in PART_WORDS:
            raise ViewOptionError(f"{option}: unknown word {word!r}; allowed: {PARTS_HELP}")
        if head == "all":
            if rest:
                raise ViewOptionError(f"{option}: 'all' takes no indices, got {word!r}")
            parts[:] = True
            any_part = True
        elif head in ("guide", "wave"):
            idx = _indices(option, word, rest, n) if rest else list(range(n))
            parts[np.asarray(idx, int) + (0 if head == "guide" else n)] = True
            any_part = True
        elif head == "caps":
            names = [c.strip() for c in rest.split(",")] if rest else list(CAP_NAMES)
            for c in names:
                if c not in CAP_NAMES:
                    raise ViewOptionError(
                        f"{option}: unknown cap {c!r} in {word!r}; allowed: south, north"
                    )
                parts[2 * n + CAP_NAMES.index(c)] = True
            any_part = True
        else:  # tile
            idx = _indices(option, word, rest, 2 * n) if rest else [0]
            tiles[idx] = True
            any_tile = True
    if not any_part:
        parts[:] = True
    if not any_tile:
        tiles[:] = True
    return PartsChoice(n, parts, tiles, " ".join(words))


def parse_reveal(text: str, option: str = "reveal") -> tuple[str, int | None]:
    """``band``, ``part``, or with a step count ``band:12`` -> (kind, count or None)."""
    kind, _, count = str(text).lower().partition(":")
    if kind not in REVEAL_KINDS:
        raise ViewOptionError(
            f"{option}: must be band or part (optionally band:COUNT), got {text!r}"
        )
    if not count:
        return kind, None
    if not count.isdigit() or int(count) < 1:
        raise ViewOptionError(
            f"{option}: the count after ':' must be an integer >= 1, got {text!r}"
        )
    return kind, int(count)


def parse_vector(text, option: str = "up") -> tuple[float, float, float]:
    """``X,Y,Z`` -> a unit 3-vector; zero, NaN or infinite vectors are refused (the core's
    one up-direction rule)."""
    from turnabout.views.levels import LevelPointError, up_from_text

    try:
        return up_from_text(text, option)
    except LevelPointError as exc:
        raise ViewOptionError(str(exc)) from None


def parse_frame_pair(text, first: int, last: int, option: str) -> tuple[int, int]:
    """``A-B`` within the scene range ``first``-``last`` -> (A, B) with A < B."""
    m = re.fullmatch(r"\s*(-?\d+)\s*-\s*(-?\d+)\s*", str(text))
    if not m:
        raise ViewOptionError(f"{option}: must look like A-B (frames), got {text!r}")
    a, b = int(m.group(1)), int(m.group(2))
    if not (first <= a < b <= last):
        raise ViewOptionError(
            f"{option}: needs {first} <= A < B <= {last} (the scene's frames), got {a}-{b}"
        )
    return a, b


@dataclass(frozen=True)
class ViewRequest:
    """The views asked for on the command line, checked; None/False where not asked for."""

    parts: PartsChoice | None = None
    stills: bool = False
    reveal: tuple[str, int | None] | None = None
    reveal_frames: tuple[int, int] | None = None
    stripes: float | None = None
    stripe_colours: tuple = (STRIPE_A, STRIPE_B)
    slices: int | None = None
    slice_width: float | None = None  # radians
    slice_which: int = 0
    level_points: bool = False
    up: tuple[float, float, float] = (0.0, 0.0, 1.0)

    @property
    def any(self) -> bool:
        return bool(
            self.parts is not None
            or self.stills
            or self.reveal is not None
            or self.stripes is not None
            or self.slices is not None
            or self.level_points
        )


def _colour(text: str):
    try:
        parts = [float(p) for p in text.split(",")]
    except ValueError:
        parts = []
    if len(parts) != 3 or not all(0.0 <= p <= 1.0 for p in parts):
        raise argparse.ArgumentTypeError(f"colour must be three numbers R,G,B in 0-1, got {text!r}")
    return (*parts, 1.0)


def add_view_options(parser: argparse.ArgumentParser) -> None:
    """The ``turnabout scene`` options of the views (names shared with the sidebar)."""
    g = parser.add_argument_group("views (see docs/views.md)")
    g.add_argument(
        "--parts",
        nargs="+",
        metavar="PART",
        default=None,
        help=f"show only these parts, one object sharing the bake: {PARTS_HELP}",
    )
    g.add_argument(
        "--stills",
        action="store_true",
        help="lay out stills of the key moments side by side and aim the camera at the row",
    )
    g.add_argument(
        "--reveal",
        default=None,
        metavar="band|part[:COUNT]",
        help="faces appear in order (by latitude band or by part) as the frames play",
    )
    g.add_argument(
        "--reveal-frames",
        default=None,
        metavar="A-B",
        help="frames over which the reveal plays (default: the whole motion)",
    )
    g.add_argument(
        "--stripes",
        type=float,
        default=None,
        metavar="SPACING",
        help="height stripes on the outer side, one light and one dark band every SPACING "
        f"scene units (> 0; e.g. {DEFAULT_STRIPE_SPACING})",
    )
    g.add_argument(
        "--stripe-colours",
        type=_colour,
        nargs=2,
        default=None,
        metavar="R,G,B",
        help="the two stripe colours (default a pale sand and a plum)",
    )
    g.add_argument(
        "--slices",
        type=int,
        default=None,
        metavar="COUNT",
        help="latitude bands (>= 1); adds a camera that tracks one band (--slice)",
    )
    g.add_argument(
        "--slice-width",
        type=float,
        default=None,
        metavar="DEGREES",
        help="width of each band in degrees of latitude (default: the bands touch)",
    )
    g.add_argument(
        "--slice",
        type=int,
        default=0,
        metavar="WHICH",
        help="the band the camera tracks, 0 = southmost (default 0)",
    )
    g.add_argument(
        "--level-points",
        action="store_true",
        help="mark the level points (domes, bowls, saddles) and show their signed count",
    )
    g.add_argument(
        "--up",
        default="0,0,1",
        metavar="X,Y,Z",
        help="the up direction that defines height for level points and slices (default 0,0,1)",
    )


def read_view_options(args, strips: int | None = None, frames: int | None = None) -> ViewRequest:
    """Check every view option of ``args`` for an eversion of ``strips`` strips and ``frames``
    frames starting at ``args.start``; raises ViewOptionError naming the option."""
    from turnabout.eversion import default_frames

    strips = int(getattr(args, "strips", 8) if strips is None else strips)
    frames = getattr(args, "frames", None) if frames is None else frames
    frames = default_frames(strips) if frames is None else int(frames)
    first = int(getattr(args, "start", 1))
    last = first + frames - 1
    parts = parse_parts(args.parts, strips, "--parts") if args.parts is not None else None
    reveal = parse_reveal(args.reveal, "--reveal") if args.reveal is not None else None
    reveal_frames = None
    if args.reveal_frames is not None:
        if reveal is None:
            raise ViewOptionError("--reveal-frames: needs --reveal band or --reveal part")
        reveal_frames = parse_frame_pair(args.reveal_frames, first, last, "--reveal-frames")
    stripes = args.stripes
    if stripes is not None and not (math.isfinite(stripes) and stripes > 0):
        raise ViewOptionError(f"--stripes: the spacing must be a number > 0, got {stripes}")
    if args.stripe_colours is not None and stripes is None:
        raise ViewOptionError("--stripe-colours: needs --stripes SPACING")
    slices = args.slices
    width = None
    if slices is not None:
        if slices < 1:
            raise ViewOptionError(f"--slices: the band count must be at least 1, got {slices}")
        if not 0 <= args.slice < slices:
            raise ViewOptionError(
                f"--slice: band {args.slice} is out of range; with --slices {slices} use 0-"
                f"{slices - 1}"
            )
        if args.slice_width is not None:
            limit = 180.0 / slices
            if not (math.isfinite(args.slice_width) and 0 < args.slice_width <= limit):
                raise ViewOptionError(
                    f"--slice-width: must be > 0 and at most {limit:g} degrees for {slices} "
                    f"bands, got {args.slice_width}"
                )
            width = math.radians(args.slice_width)
    elif args.slice_width is not None or args.slice != 0:
        raise ViewOptionError("--slice / --slice-width: need --slices COUNT")
    up = parse_vector(args.up, "--up")
    return ViewRequest(
        parts=parts,
        stills=bool(args.stills),
        reveal=reveal,
        reveal_frames=reveal_frames,
        stripes=stripes,
        stripe_colours=tuple(args.stripe_colours or (STRIPE_A, STRIPE_B)),
        slices=slices,
        slice_width=width,
        slice_which=int(args.slice),
        level_points=bool(args.level_points),
        up=up,
    )


# ----------------------------------------------------------------------------- face order


def polygon_pairs(n_lon: int, n_lat: int, per_triangle) -> tuple[np.ndarray, np.ndarray]:
    """Per-triangle values (``SphereMesh.triangles()`` order) as two per-polygon arrays of
    the add-on's mesh (quads ring by ring, then the south and north fans).

    per_triangle : (M,) any dtype, M = 2 * n_lon * n_lat. Returns (first, second), each (P,)
    with P = n_lon * (n_lat + 1): a quad (a, b, c, d) is split along a-c as in the core, and
    gets its triangle (a, b, c) in ``first`` and (a, c, d) in ``second``; a pole triangle has
    its value in both.
    """
    v = np.asarray(per_triangle)
    q = n_lon * (n_lat - 1)
    if v.shape[0] != 2 * q + 2 * n_lon:
        raise ViewOptionError(
            f"mesh: {v.shape[0]} triangle values do not fit a {n_lon} x {n_lat} sphere"
        )
    poles = np.concatenate([v[:n_lon], v[n_lon + 2 * q :]])
    first = np.concatenate([v[n_lon : n_lon + q], poles])
    second = np.concatenate([v[n_lon + q : n_lon + 2 * q], poles])
    return first, second
