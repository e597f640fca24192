"""Closed plane curves from SVG files and SVG path data (numpy and the standard library only).

What is read (SVG 1.1, W3C Recommendation 2011):

- ``<path>`` (every path command, see :mod:`.svg_path`); one curve per subpath;
- the basic shapes of section 9 through the equivalent paths the specification gives:
  ``<rect>`` (rounded corners: a missing ``rx``/``ry`` takes the other's value, then
  ``rx`` is clamped to half the width and ``ry`` to half the height), ``<circle>``,
  ``<ellipse>``, ``<polygon>`` (closed) and ``<polyline>`` (open, as SVG draws it: it is
  a closed curve only when its last point repeats its first). Each shape is drawn from its
  "3 o'clock" point clockwise on screen (through 6 o'clock, as SVG 2 makes explicit), so it
  has turning number -1 in our y-up coordinates unless a mirroring transform flips it;
- ``transform`` attributes of the element and its ancestors.

What is skipped: everything inside ``<defs>``, ``<clipPath>``, ``<mask>``, ``<symbol>``,
``<marker>``, ``<pattern>`` (never drawn by themselves) and elements hidden by
``display="none"`` (on them or on an ancestor, as an attribute or in ``style``) or by an
inherited ``visibility`` of ``hidden`` / ``collapse``. ``<use>``, ``<line>`` and text are
not read.

Ends that meet up to rounding are the same point: endpoints closer than
:data:`CLOSE_TOLERANCE` of the drawing's size (the extent of every curve read) are equal,
and segments shorter than that are dropped (they draw nothing). Messages name the element
(``path 2 (id=loop)``), the subpath and the segment by its number in the path and its
coordinates in the file, never internal sample numbers.

Coordinates: SVG's y axis points down; we flip it, so a path that looks counter-clockwise on
screen has turning number +1.

Untrusted input: the file size is checked before reading; a DOCTYPE or entity declaration
is refused before the tree is built (no entity expansion); element, shape and segment
counts are bounded; nothing in the file is evaluated.
"""

from __future__ import annotations

import os
import re
import xml.etree.ElementTree as ET
import xml.parsers.expat
from dataclasses import dataclass

import numpy as np

from .bezier import sample_pieces
from .sampling import MAX_SEGMENTS, CurveError
from .svg_path import parse_path_data, parse_transform

#: Largest SVG file read, bytes.
MAX_SVG_BYTES = 5_000_000
#: Most path and shape elements read from one file.
MAX_SVG_PATHS = 1_000
#: Most XML elements in one file.
MAX_SVG_ELEMENTS = 200_000
#: Longest path data string, characters.
MAX_PATH_DATA = 2_000_000
#: Endpoints closer than this fraction of the drawing's size are the same point.
CLOSE_TOLERANCE = 1e-6
#: Elements whose content is never drawn by itself.
NOT_DRAWN = frozenset(
    {
        "defs",
        "clipPath",
        "mask",
        "symbol",
        "marker",
        "pattern",
        "metadata",
        "title",
        "desc",
        "style",
        "script",
        "foreignObject",
        "text",
    }
)
SHAPES = ("path", "rect", "circle", "ellipse", "polygon", "polyline")
_UNITS = {
    "": 1.0,
    "px": 1.0,
    "pt": 4.0 / 3.0,
    "pc": 16.0,
    "mm": 96.0 / 25.4,
    "cm": 96.0 / 2.54,
    "in": 96.0,
}
_LENGTH = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*([a-z%]*)\s*$")
_NUMBERS = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_FLIP = np.diag([1.0, -1.0, 1.0])


@dataclass(frozen=True)
class SvgCurve:
    """One closed curve of an SVG file (one subpath of a path, or one shape), sampled.

    label : e.g. ``path 2 (id=loop) subpath 1``; ``id`` is the element's id or ""
    points : (N, 2) float64 in y-up coordinates (N >= the samples asked for when usable;
        more when the curve's bends need more, see :mod:`.bezier`), else (0, 2)
    closed : the subpath ends where it starts
    problem : why it cannot be used as a closed regular curve ("" if it can)
    """

    label: str
    id: str
    points: np.ndarray
    closed: bool
    problem: str


def _source_name(source) -> str:
    return "SVG data" if isinstance(source, bytes) else os.path.basename(os.fspath(source))


def _refuse_declarations(data: bytes, name: str) -> None:
    """Refuse DOCTYPE and entity declarations before any tree is built (any encoding)."""

    def refuse(*_args):
        raise CurveError(
            f"{name}: SVG with a DOCTYPE or entity declarations is not read (entities could "
            "expand without bound); remove the declaration"
        )

    parser = xml.parsers.expat.ParserCreate()
    parser.StartDoctypeDeclHandler = refuse
    parser.EntityDeclHandler = refuse
    parser.UnparsedEntityDeclHandler = refuse
    parser.ExternalEntityRefHandler = refuse
    count = 0

    def start(*_args):
        nonlocal count
        count += 1
        if count > MAX_SVG_ELEMENTS:
            raise CurveError(f"{name}: more than {MAX_SVG_ELEMENTS} XML elements")

    parser.StartElementHandler = start
    try:
        parser.Parse(data, True)
    except xml.parsers.expat.ExpatError as exc:
        raise CurveError(f"{name}: not a readable SVG (XML) file: {exc}") from None


def _read_bytes(source) -> bytes:
    name = _source_name(source)
    if isinstance(source, bytes):
        data = source
    else:
        path = os.fspath(source)
        try:
            size = os.path.getsize(path)
        except OSError as exc:
            raise CurveError(f"cannot read SVG file {path!r}: {exc.strerror}") from None
        if size > MAX_SVG_BYTES:
            raise CurveError(f"{name}: SVG file is {size} bytes; at most {MAX_SVG_BYTES} are read")
        try:
            with open(path, "rb") as fh:
                data = fh.read(MAX_SVG_BYTES + 1)
        except OSError as exc:
            raise CurveError(f"cannot read SVG file {path!r}: {exc.strerror}") from None
    if len(data) > MAX_SVG_BYTES:
        raise CurveError(f"{name}: SVG data is over {MAX_SVG_BYTES} bytes; at most that is read")
    _refuse_declarations(data, name)
    return data


def _local(tag) -> str:
    return tag.rsplit("}", 1)[-1] if isinstance(tag, str) else ""


def _style(el, prop: str) -> str | None:
    """A presentation property from the ``style`` attribute, else from the attribute."""
    for decl in (el.get("style") or "").split(";"):
        key, _, value = decl.partition(":")
        if key.strip() == prop:
            return value.strip()
    value = el.get(prop)
    return value.strip() if value is not None else None


def _drawn_elements(root, name: str):
    """(element, 3x3 transform in file coordinates) of each drawn shape, in document order."""
    out = []
    stack = [(root, np.eye(3), "visible")]
    while stack:
        el, m, visibility = stack.pop()
        tag = _local(el.tag)
        if tag in NOT_DRAWN or _style(el, "display") == "none":
            continue
        vis = _style(el, "visibility")
        visibility = vis if vis in ("visible", "hidden", "collapse") else visibility
        tr = el.get("transform")
        if tr:
            m = m @ parse_transform(tr, label=f"{name}: <{tag}> transform")
        if tag in SHAPES:
            if visibility == "visible":
                out.append((el, m))
                if len(out) > MAX_SVG_PATHS:
                    raise CurveError(f"{name}: more than {MAX_SVG_PATHS} paths and shapes")
            continue
        stack.extend((child, m, visibility) for child in reversed(list(el)))
    return out


def _length(el, attr: str, default: float | None, label: str) -> float | None:
    text = el.get(attr)
    if text is None or text.strip() in ("", "auto"):
        return default
    hit = _LENGTH.match(text)
    if hit is None or hit.group(2) not in _UNITS:
        raise CurveError(
            f"{label}: {attr}={text!r} is not a length in user units, px, pt, pc, mm, cm or in "
            "(percentages and font-relative units are not read)"
        )
    value = float(hit.group(1)) * _UNITS[hit.group(2)]
    if not np.isfinite(value):
        raise CurveError(f"{label}: {attr}={text!r} is not a finite number")
    return value


def _shape_path(el, tag: str, label: str) -> tuple[str, str]:
    """The equivalent path data of a shape (SVG 1.1, section 9), or ("", why not drawn)."""
    if tag == "path":
        d = el.get("d") or ""
        if len(d) > MAX_PATH_DATA:
            raise CurveError(f"{label}: path data of {len(d)} characters; at most {MAX_PATH_DATA}")
        return d, "" if d.strip() else "no path data"
    if tag in ("polygon", "polyline"):
        text = el.get("points") or ""
        if len(text) > MAX_PATH_DATA:
            raise CurveError(f"{label}: points of {len(text)} characters; at most {MAX_PATH_DATA}")
        nums = _NUMBERS.findall(text)
        if len(nums) % 2:
            return "", f"its points hold an odd number of coordinates ({len(nums)})"
        if len(nums) < 4:
            return "", "fewer than two points"
        return "M " + " ".join(nums) + (" Z" if tag == "polygon" else ""), ""
    num = {
        a: _length(el, a, None, label)
        for a in ("x", "y", "cx", "cy", "width", "height", "r", "rx", "ry")
    }
    for a in ("width", "height", "r", "rx", "ry"):
        if num[a] is not None and num[a] < 0:
            raise CurveError(f"{label}: {a} is negative ({num[a]:g}); SVG does not allow that")
    if tag == "rect":
        x, y = num["x"] or 0.0, num["y"] or 0.0
        w, h = num["width"] or 0.0, num["height"] or 0.0
        if w == 0 or h == 0:
            return "", "not drawn (its width or height is zero)"
        rx, ry = num["rx"], num["ry"]
        if rx is None and ry is None:
            rx = ry = 0.0
        elif ry is None:
            ry = rx
        elif rx is None:
            rx = ry
        rx, ry = min(rx, w / 2), min(ry, h / 2)
        arc = f"A {rx!r} {ry!r} 0 0 1"
        return (
            f"M {x + rx!r} {y!r} H {x + w - rx!r} {arc} {x + w!r} {y + ry!r} "
            f"V {y + h - ry!r} {arc} {x + w - rx!r} {y + h!r} H {x + rx!r} "
            f"{arc} {x!r} {y + h - ry!r} V {y + ry!r} {arc} {x + rx!r} {y!r} Z",
            "",
        )
    cx, cy = num["cx"] or 0.0, num["cy"] or 0.0
    rx, ry = (num["r"], num["r"]) if tag == "circle" else (num["rx"], num["ry"])
    if not rx or not ry:
        return "", "not drawn (its radius is zero or missing)"
    arc = f"A {rx!r} {ry!r} 0 0 1"
    return (
        f"M {cx + rx!r} {cy!r} {arc} {cx!r} {cy + ry!r} {arc} {cx - rx!r} {cy!r} "
        f"{arc} {cx!r} {cy - ry!r} {arc} {cx + rx!r} {cy!r} Z",
        "",
    )


def _affine(pieces: np.ndarray, m: np.ndarray) -> np.ndarray:
    """Control points (k, 4, 2) through a 3x3 affine matrix."""
    return pieces @ m[:2, :2].T + m[:2, 2]


def _fmt(p) -> str:
    return f"({p[0]:.6g}, {p[1]:.6g})"


def _curves_of(parsed, m, label: str, ident: str, tol: float, samples: int) -> list[SvgCurve]:
    """Sample each subpath of a parsed path whose pieces are in output coordinates."""
    out = []
    subs = parsed.subpaths
    for j, sub in enumerate(subs):
        name = f"{label} subpath {j}" if len(subs) > 1 else label
        pieces = _affine(sub.pieces, m)
        seg = sub.segment
        hull = np.linalg.norm(np.diff(pieces, axis=1), axis=2).sum(axis=1)
        seg_len = np.bincount(seg, weights=hull)[seg]
        keep = seg_len > tol  # segments shorter than the tolerance draw nothing
        pieces, seg = pieces[keep], seg[keep]
        empty = np.zeros((0, 2))
        if pieces.shape[0] == 0:
            out.append(SvgCurve(name, ident, empty, False, "no segment of non-zero length"))
            continue
        gap = float(np.linalg.norm(pieces[-1, 3] - pieces[0, 0]))
        if gap > tol:
            problem = (
                f"open path: it ends at {_fmt(sub.end)}, not at its start {_fmt(sub.start)}"
                + (
                    " (a <polyline> is open unless its last point repeats its first; use <polygon>)"
                    if label.startswith("polyline")
                    else "; close it with 'z'"
                )
            )
            out.append(SvgCurve(name, ident, empty, False, problem))
            continue
        # ends within the tolerance are the same point: join every piece to the one before
        shift = np.roll(pieces[:, 3], 1, axis=0) - pieces[:, 0]
        pieces[:, :2] += shift[:, None, :]
        try:
            pts = sample_pieces(
                pieces,
                seg,
                samples=samples,
                name=name,
                describe=lambda o: parsed.descriptions.get(int(o), f"segment {o}"),
            )
        except CurveError as exc:
            out.append(SvgCurve(name, ident, empty, True, str(exc).removeprefix(f"{name}: ")))
            continue
        out.append(SvgCurve(name, ident, pts, True, ""))
    return out


def svg_path_data_curves(
    d: str, *, samples: int = 1024, transform=None, label: str = "path"
) -> list[SvgCurve]:
    """Curves from one SVG path data string (the ``d`` attribute), one per subpath.

    transform : optional 3x3 affine matrix applied before the y flip. The closing
    tolerance is taken from this path's own size.
    """
    if len(d) > MAX_PATH_DATA:
        raise CurveError(f"{label}: path data of {len(d)} characters; at most {MAX_PATH_DATA}")
    parsed = parse_path_data(d, label=label, max_segments=MAX_SEGMENTS)
    m = _FLIP @ (np.eye(3) if transform is None else np.asarray(transform, dtype=np.float64))
    return _curves_of(parsed, m, label, "", _tolerance([(parsed, m)]), samples)


def _tolerance(parsed_list) -> float:
    pts = [
        _affine(sub.pieces, m).reshape(-1, 2)
        for parsed, m in parsed_list
        for sub in parsed.subpaths
    ]
    if not pts:
        return 0.0
    allp = np.concatenate(pts)
    return CLOSE_TOLERANCE * float(np.ptp(allp, axis=0).max())


def read_svg_curves(source, *, samples: int = 1024) -> list[SvgCurve]:
    """Every drawn path subpath and shape of an SVG file (path, or the file's bytes), sampled.

    Raises CurveError (naming the file) when the file cannot be read or parsed; a curve
    that is open or not regular is returned with its ``problem`` set.
    """
    name = _source_name(source)
    data = _read_bytes(source)
    try:
        root = ET.fromstring(data)
    except ET.ParseError as exc:
        raise CurveError(f"{name}: not a readable SVG (XML) file: {exc}") from None
    if _local(root.tag) != "svg":
        raise CurveError(
            f"{name}: not an SVG file: the root element is <{_local(root.tag)}>, not <svg>"
        )
    entries = []
    budget = MAX_SEGMENTS
    for i, (el, m) in enumerate(_drawn_elements(root, name)):
        tag = _local(el.tag)
        ident = el.get("id") or ""
        label = f"{tag} {i}" + (f" (id={ident})" if ident else "")
        d, why = _shape_path(el, tag, f"{name}: {label}")
        if why:
            entries.append((label, ident, None, None, why))
            continue
        parsed = parse_path_data(d, label=f"{name}: {label}", max_segments=budget)
        budget -= parsed.segments
        entries.append((label, ident, parsed, _FLIP @ m, ""))
    tol = _tolerance([(p, m) for _, _, p, m, _ in entries if p is not None])
    curves: list[SvgCurve] = []
    for label, ident, parsed, m, why in entries:
        if parsed is None:
            curves.append(SvgCurve(label, ident, np.zeros((0, 2)), False, why))
        elif not parsed.subpaths:
            curves.append(SvgCurve(label, ident, np.zeros((0, 2)), False, "nothing drawn"))
        else:
            curves.extend(_curves_of(parsed, m, label, ident, tol, samples))
    return curves


def select_svg_curve(
    curves: list[SvgCurve], select: int | str | None = None, source: str = "SVG"
) -> np.ndarray:
    """The one usable closed curve of a list, or the one chosen by index, id or label.

    select : None (there must be exactly one usable curve), an index into ``curves``, or
        an element id / label. Raises CurveError listing the choices otherwise.
    """
    usable = [c for c in curves if not c.problem]
    listing = "; ".join(
        f"[{i}] {c.label}" + (f": {c.problem}" if c.problem else "") for i, c in enumerate(curves)
    )
    if select is None:
        if len(usable) == 1:
            return usable[0].points
        if not usable:
            raise CurveError(
                f"{source}: no closed regular path found" + (f" ({listing})" if curves else "")
            )
        raise CurveError(
            f"{source}: {len(usable)} closed paths; choose one by index or id: " + listing
        )
    if isinstance(select, (int, np.integer)) and not isinstance(select, bool):
        if not 0 <= select < len(curves):
            raise CurveError(f"{source}: no path [{select}]; choose one of: {listing}")
        chosen = curves[int(select)]
    else:
        matches = [c for c in curves if select in (c.id, c.label)]
        if not matches:
            raise CurveError(
                f"{source}: no path with id or label {select!r}; choose one of: {listing}"
            )
        if len(matches) > 1:
            raise CurveError(
                f"{source}: id {select!r} has {len(matches)} subpaths; "
                f"choose one by index: {listing}"
            )
        chosen = matches[0]
    if chosen.problem:
        raise CurveError(f"{source}: {chosen.label}: {chosen.problem}")
    return chosen.points


def curve_from_svg(source, *, select: int | str | None = None, samples: int = 1024) -> np.ndarray:
    """One closed curve from an SVG file: (N, 2) float64, y up, N >= samples.

    See :func:`read_svg_curves` and :func:`select_svg_curve`.
    """
    return select_svg_curve(read_svg_curves(source, samples=samples), select, _source_name(source))
