"""The artistic controls of the corrugated eversion and their validation.

Stage names (used the same way in the API, the CLI, the docs and the add-on):

``ripple``  the waves (corrugations) grow on the round sphere;
``swap``    the polar caps travel past each other along the axis;
``twist``   the caps turn in opposite directions about the axis;
``tuck``    the equatorial region passes through the centre;
``calm``    the waves die away, leaving the round sphere turned inside out.

Each stage has a (start, end) window as fractions of the whole motion in [0, 1].

The documented defaults per strip count (depth, windows, frames) are read from the tuned
table ``tuned_controls.json`` in this package, which ``turnabout tune`` writes
(docs/sweeps.md, section 3).
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field, fields, replace
from importlib import resources

STAGE_NAMES: tuple[str, ...] = ("ripple", "swap", "twist", "tuck", "calm")

STAGE_HELP: dict[str, str] = {
    "ripple": "the waves grow on the round sphere",
    "swap": "the polar caps travel past each other along the axis",
    "twist": "the caps turn in opposite directions about the axis",
    "tuck": "the equatorial region passes through the centre",
    "calm": "the waves die away",
}


class ControlError(ValueError):
    """A control value is outside what the construction accepts.

    ``option`` names the control; the message says what was given and what is allowed.
    """

    def __init__(self, option: str, message: str):
        super().__init__(f"{option}: {message}")
        self.option = option
        self.message = message


# The strip counts that work: every count from 8 to 16 passes the build gate at every depth
# of depth_range with its default windows, and has measured frame counts and scan figures
# (docs/eversion.md). Above 16 the gate refuses the documented depth (64 strips at 0.15:
# normalised ratio 0.049 against the floor 0.05) and the default mesh and frame count grow
# past what a workstation holds (64 strips: about 380,000 vertices x 1,800 frames), so
# counts above 16 are refused rather than documented as working.
MIN_STRIPS = 8
MAX_STRIPS = 16


def _check_strips(s) -> None:
    if isinstance(s, bool) or not isinstance(s, int):
        if isinstance(s, float) and math.isfinite(s) and s.is_integer():
            raise ControlError("strips", f"must be an integer, got the float {s!r}")
        raise ControlError(
            "strips", f"must be an integer from {MIN_STRIPS} to {MAX_STRIPS}, got {s!r}"
        )
    if not MIN_STRIPS <= s <= MAX_STRIPS:
        raise ControlError("strips", f"must be from {MIN_STRIPS} to {MAX_STRIPS}, got {s}")


@dataclass(frozen=True)
class Controls:
    """A validated set of controls.

    strips : number of guide strips (n-fold symmetry about the vertical axis), integer >= MIN_STRIPS
    depth : corrugation depth as a fraction of the sphere's radius (in :func:`depth_range`);
        ``None`` picks the documented depth for the strip count
    timing : stage name -> (start, end) fractions of the motion; ``None`` picks the
        documented windows for the strip count (:func:`default_timing`), resolved here, so
        ``controls.timing`` is always a dict. :meth:`with_changes` resolves defaulted
        windows again for a new strip count.
    """

    strips: int = MIN_STRIPS
    depth: float | None = None
    timing: dict[str, tuple[float, float]] | None = None
    # the windows were defaulted (timing=None): they follow the strip count
    timing_is_default: bool = field(default=False, init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        if self.timing is None:
            _check_strips(self.strips)
            object.__setattr__(self, "timing", default_timing(self.strips))
            object.__setattr__(self, "timing_is_default", True)
        validate(self)

    @property
    def wave_depth(self) -> float:
        return default_depth(self.strips) if self.depth is None else float(self.depth)

    def with_changes(self, **changes) -> Controls:
        """A copy with some controls changed; defaulted windows follow a new strip count."""
        if self.timing_is_default and "timing" not in changes:
            changes["timing"] = None
        return replace(self, **changes)

    def as_dict(self) -> dict:
        out = {f.name: getattr(self, f.name) for f in fields(self) if f.init}
        out["depth"] = self.wave_depth
        out["timing"] = {k: list(v) for k, v in self.timing.items()}
        return out


def depth_range() -> tuple[float, float]:
    """Allowed corrugation depth (inclusive), as a fraction of the radius: the same for every
    allowed strip count (MIN_STRIPS to MAX_STRIPS).

    Below the range the waves no longer dominate the rotation where the wave axis cannot
    follow it (the surface nears a fold); above it they reach the guide's focal distance.
    """
    return (0.13, 0.16)


def _finite(option: str, value) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ControlError(option, f"must be a number, got {value!r}") from None
    if not math.isfinite(v):
        raise ControlError(option, f"must be finite, got {value!r}")
    return v


def validate(c: Controls) -> None:
    """Raise :class:`ControlError` naming the first bad control and its allowed range."""
    _check_strips(c.strips)
    s = c.strips
    if c.depth is not None:
        d = _finite("depth", c.depth)
        lo, hi = depth_range()
        if not lo <= d <= hi:
            raise ControlError(
                "depth", f"must be from {lo:.4g} to {hi:.4g} for {s} strips, got {d:.4g}"
            )
    if set(c.timing) != set(STAGE_NAMES):
        missing = [n for n in STAGE_NAMES if n not in c.timing]
        extra = [n for n in c.timing if n not in STAGE_NAMES]
        raise ControlError(
            "timing",
            f"needs exactly the stages {', '.join(STAGE_NAMES)}; "
            f"missing {missing or 'none'}, unknown {extra or 'none'}",
        )
    prev_start = prev_end = 0.0
    for name in STAGE_NAMES:
        win = c.timing[name]
        if len(win) != 2:
            raise ControlError(name, f"needs (start, end), got {win!r}")
        a = _finite(f"{name} start", win[0])
        b = _finite(f"{name} end", win[1])
        if not (0.0 <= a < b <= 1.0):
            raise ControlError(name, f"needs 0 <= start < end <= 1, got ({a:g}, {b:g})")
        if a < prev_start or b < prev_end:
            raise ControlError(
                name,
                f"must not start or end before the previous stage; got ({a:g}, {b:g}) "
                f"after a stage spanning ({prev_start:g}, {prev_end:g})",
            )
        prev_start, prev_end = a, b


# --- the tuned table: documented depth, windows and frames per strip count ----------------
# tuned_controls.json (in this package) is written by `turnabout tune` (its "command" field
# says how; docs/sweeps.md, section 3): per strip count the depth with the smallest peak
# curvature that stays regular, the windows that need the fewest frames, and the frames
# (whole seconds at 24 fps) that keep every vertex of the default mesh within 0.95 of its
# local edge length per frame (docs/eversion.md, sections 5, 6 and 8).
TUNED_FILE = "tuned_controls.json"
MAX_TUNED_BYTES = 1_000_000


class TunedTableError(ValueError):
    """The tuned table cannot be used; the message names the file and the entry."""


@dataclass(frozen=True)
class TunedEntry:
    """One strip count's documented controls: depth, windows (stage -> (start, end)), frames."""

    depth: float
    timing: dict[str, tuple[float, float]]
    frames: int


def parse_tuned_table(text: str, source: str = TUNED_FILE) -> dict[int, TunedEntry]:
    """The entries of a tuned table's JSON text, every strip count MIN_STRIPS-MAX_STRIPS
    present and valid; raises :class:`TunedTableError` naming ``source`` and the entry."""
    if len(text) > MAX_TUNED_BYTES:
        raise TunedTableError(f"{source}: {len(text)} characters; at most {MAX_TUNED_BYTES}")
    try:
        data = json.loads(text)
    except ValueError as exc:
        raise TunedTableError(f"{source}: not JSON ({exc})") from None
    table = data.get("strips") if isinstance(data, dict) else None
    if not isinstance(table, dict):
        raise TunedTableError(f"{source}: needs an object 'strips' (strip count -> entry)")
    want = [str(n) for n in range(MIN_STRIPS, MAX_STRIPS + 1)]
    if sorted(table, key=lambda k: (len(k), k)) != want:
        raise TunedTableError(
            f"{source}: 'strips' must hold exactly the counts {MIN_STRIPS}-{MAX_STRIPS}, "
            f"got {', '.join(sorted(table)) or 'none'}"
        )
    out: dict[int, TunedEntry] = {}
    for key in want:
        where = f"{source}: strips {key}"
        e = table[key]
        if not isinstance(e, dict) or not {"depth", "timing", "frames"} <= set(e):
            raise TunedTableError(f"{where}: needs 'depth', 'timing' and 'frames'")
        frames = e["frames"]
        if isinstance(frames, bool) or not isinstance(frames, int) or frames < 2:
            raise TunedTableError(f"{where}: 'frames' must be an integer >= 2, got {frames!r}")
        depth, timing = e["depth"], e["timing"]
        if isinstance(depth, bool) or not isinstance(depth, (int, float)):
            raise TunedTableError(f"{where}: 'depth' must be a number, got {depth!r}")
        if not isinstance(timing, dict) or not all(
            isinstance(w, list) and len(w) == 2 and all(
                isinstance(v, (int, float)) and not isinstance(v, bool) for v in w)
            for w in timing.values()
        ):  # fmt: skip
            raise TunedTableError(f"{where}: 'timing' must map stage names to [start, end]")
        order = [*(k for k in STAGE_NAMES if k in timing), *(k for k in timing if k not in
                                                               STAGE_NAMES)]  # fmt: skip
        windows = {k: (float(timing[k][0]), float(timing[k][1])) for k in order}
        try:
            Controls(strips=int(key), depth=float(depth), timing=windows)
        except ControlError as exc:
            raise TunedTableError(f"{where}: {exc}") from None
        out[int(key)] = TunedEntry(float(depth), windows, frames)
    return out


_TUNED: dict[int, TunedEntry] = {}


def tuned_entries() -> dict[int, TunedEntry]:
    """The shipped tuned table (read and validated once)."""
    if not _TUNED:
        text = resources.files(__package__).joinpath(TUNED_FILE).read_text(encoding="utf-8")
        _TUNED.update(parse_tuned_table(text, f"turnabout/eversion/{TUNED_FILE}"))
    return _TUNED


def _entry(strips: int) -> TunedEntry:
    _check_strips(strips)
    return tuned_entries()[strips]


def default_depth(strips: int) -> float:
    """The documented corrugation depth for a strip count (fraction of the radius)."""
    return _entry(strips).depth


def default_timing(strips: int) -> dict[str, tuple[float, float]]:
    """The documented stage windows for a strip count: stage -> (start, end), a new dict."""
    return dict(_entry(strips).timing)


def default_frames(strips: int) -> int:
    """The documented frame count for a strip count (its default windows and mesh)."""
    return _entry(strips).frames


# Frames of a default build of the default 8 strips: 20 s at 24 frames per second.
DEFAULT_FRAMES = default_frames(MIN_STRIPS)
