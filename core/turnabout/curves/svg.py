"""Closed plane curves from SVG files and SVG path data.

Path data is parsed by svgpathtools (the ``svg`` extra), imported only when needed. The
file itself is read by the standard library's XML parser after checks for untrusted
input: a size limit, no DOCTYPE or entity declarations (no entity expansion), a limit on
the number of paths and segments. Nothing in the file is evaluated.

Coordinates: SVG's y axis points down; we flip it, so a path that looks counter-clockwise
on screen has turning number +1. ``transform`` attributes on a ``<path>`` / ``<polygon>``
and its ancestors are applied. ``<path>`` and ``<polygon>`` elements are read; other
shapes are ignored. A path element with several subpaths (several ``M`` commands) gives
one curve per subpath.
"""

from __future__ import annotations

import os
import xml.etree.ElementTree as ET
from dataclasses import dataclass

import numpy as np

from .sampling import MAX_SEGMENTS, CurveError, closed_curve, resample_by_arc_length

#: Largest SVG file read, bytes.
MAX_SVG_BYTES = 5_000_000
#: Most path and polygon elements read from one file.
MAX_SVG_PATHS = 1_000
#: Longest path data string, characters.
MAX_PATH_DATA = 2_000_000


def _svgpathtools():
    try:
        import svgpathtools
        from svgpathtools import parser
    except ImportError:
        raise CurveError(
            "reading SVG needs the optional package svgpathtools: install the 'svg' extra "
            "(pip install 'turnabout[svg]')"
        ) from None
    return svgpathtools, parser


@dataclass(frozen=True)
class SvgCurve:
    """One subpath of an SVG file, sampled.

    label : e.g. ``path 2 (id=loop) subpath 1``; ``id`` is the element's id or ""
    points : (N, 2) float64 in y-up coordinates (N = samples when closed and regular)
    closed : the subpath ends where it starts
    problem : why the subpath cannot be used as a closed regular curve ("" if it can)
    """

    label: str
    id: str
    points: np.ndarray
    closed: bool
    problem: str


def _read_bytes(source) -> bytes:
    if isinstance(source, bytes):
        data = source
    else:
        path = os.fspath(source)
        try:
            size = os.path.getsize(path)
        except OSError as exc:
            raise CurveError(f"cannot read SVG file {path!r}: {exc.strerror}") from None
        if size > MAX_SVG_BYTES:
            raise CurveError(f"SVG file is {size} bytes; at most {MAX_SVG_BYTES} are read")
        try:
            with open(path, "rb") as fh:
                data = fh.read(MAX_SVG_BYTES + 1)
        except OSError as exc:
            raise CurveError(f"cannot read SVG file {path!r}: {exc.strerror}") from None
    if len(data) > MAX_SVG_BYTES:
        raise CurveError(f"SVG data is over {MAX_SVG_BYTES} bytes")
    head = data.upper()
    if b"<!DOCTYPE" in head or b"<!ENTITY" in head:
        raise CurveError(
            "SVG with a DOCTYPE or entity declarations is not read "
            "(entities could expand without bound); remove the declaration"
        )
    return data


def _local(tag) -> str:
    return tag.rsplit("}", 1)[-1] if isinstance(tag, str) else ""


def _elements(root, parse_transform):
    """(element, 3x3 transform) for each path / polygon, in document order."""
    out = []
    stack = [(root, np.eye(3))]
    while stack:
        el, m = stack.pop()
        tr = el.get("transform")
        if tr:
            try:
                m = m @ np.asarray(parse_transform(tr, strict=True), dtype=np.float64)
            except Exception as exc:  # the library raises several kinds on bad syntax
                raise CurveError(f"unreadable transform {tr[:60]!r}: {exc}") from None
        if _local(el.tag) in ("path", "polygon"):
            out.append((el, m))
            if len(out) > MAX_SVG_PATHS:
                raise CurveError(f"more than {MAX_SVG_PATHS} paths in the SVG")
        stack.extend((child, m) for child in reversed(list(el)))
    return out


def _segment_hull(seg) -> float:
    try:
        pts = np.asarray(seg.bpoints(), dtype=np.complex128)
        return float(np.abs(np.diff(pts)).sum())
    except AttributeError:  # an elliptical arc
        return float(abs(seg.end - seg.start) + abs(seg.radius))


def _sample_subpath(subpath, per_segment: int) -> np.ndarray:
    t = np.arange(per_segment) / per_segment
    pts = [np.atleast_1d(np.asarray(seg.point(t), dtype=np.complex128)) for seg in subpath]
    z = np.concatenate(pts)
    return np.stack([z.real, z.imag], axis=1)


def svg_path_data_curves(
    d: str, *, samples: int = 1024, transform=None, label: str = "path"
) -> list[SvgCurve]:
    """Curves from one SVG path data string (the ``d`` attribute), one per subpath.

    transform : optional 3x3 affine matrix applied before the y flip
    """
    svgpathtools, _ = _svgpathtools()
    if len(d) > MAX_PATH_DATA:
        raise CurveError(f"{label}: path data of {len(d)} characters; at most {MAX_PATH_DATA}")
    try:
        path = svgpathtools.parse_path(d)
    except Exception as exc:  # ValueError and others on malformed data
        raise CurveError(f"{label}: unreadable path data: {exc}") from None
    if len(path) > MAX_SEGMENTS:
        raise CurveError(f"{label}: {len(path)} segments; at most {MAX_SEGMENTS}")
    if len(path) == 0:
        return []
    m = np.eye(3) if transform is None else np.asarray(transform, dtype=np.float64)
    flip = np.diag([1.0, -1.0, 1.0]) @ m
    try:
        subpaths = path.continuous_subpaths()
    except Exception as exc:
        raise CurveError(f"{label}: unreadable path data: {exc}") from None
    out = []
    for j, sub in enumerate(subpaths):
        name = f"{label} subpath {j}" if len(subpaths) > 1 else label
        hull = np.array([_segment_hull(seg) for seg in sub])
        problem = ""
        pts = np.zeros((0, 2))
        closed = bool(abs(sub.end - sub.start) <= 1e-9 * max(hull.sum(), 1e-300))
        if not closed:
            problem = "open path (it does not end where it starts; close it with 'Z')"
        elif np.any(hull <= 1e-9 * hull.sum()):
            problem = f"zero-length segment {int(np.flatnonzero(hull <= 1e-9 * hull.sum())[0])}"
        else:
            per = int(np.clip(8 * samples // len(sub), 16, 4096))
            dense = _sample_subpath(sub, per)
            dense = dense @ flip[:2, :2].T + flip[:2, 2]
            try:
                pts = resample_by_arc_length(closed_curve(dense, name=name), samples)
                closed_curve(pts, name=name)
            except CurveError as exc:
                problem = str(exc).removeprefix(f"{name}: ")
                pts = np.zeros((0, 2))
        out.append(SvgCurve(label=name, id="", points=pts, closed=closed, problem=problem))
    return out


def read_svg_curves(source, *, samples: int = 1024) -> list[SvgCurve]:
    """Every path and polygon subpath of an SVG file (path, or the file's bytes), sampled.

    Raises CurveError when the file cannot be read or parsed; a subpath that is open or
    not regular is returned with its ``problem`` set.
    """
    _, parser = _svgpathtools()
    data = _read_bytes(source)
    try:
        root = ET.fromstring(data)
    except ET.ParseError as exc:
        raise CurveError(f"not a readable SVG (XML) file: {exc}") from None
    if _local(root.tag) != "svg":
        raise CurveError(f"not an SVG file: the root element is <{_local(root.tag)}>, not <svg>")
    curves: list[SvgCurve] = []
    for i, (el, m) in enumerate(_elements(root, parser.parse_transform)):
        ident = el.get("id") or ""
        label = f"{_local(el.tag)} {i}" + (f" (id={ident})" if ident else "")
        if _local(el.tag) == "polygon":
            d = "M " + (el.get("points") or "") + " Z"
        else:
            d = el.get("d") or ""
        found = svg_path_data_curves(d, samples=samples, transform=m, label=label)
        curves.extend(SvgCurve(c.label, ident, c.points, c.closed, c.problem) for c in found)
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
    """One closed curve from an SVG file: (samples, 2) float64, y up.

    See :func:`read_svg_curves` and :func:`select_svg_curve`.
    """
    name = os.path.basename(os.fspath(source)) if not isinstance(source, bytes) else "SVG"
    return select_svg_curve(read_svg_curves(source, samples=samples), select, name)
