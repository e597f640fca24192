"""SVG path data and transforms, read into cubic Bezier pieces (numpy only).

Reads the ``d`` attribute of ``<path>`` (every command of SVG 1.1, section 8.3: M L H V C S
Q T A Z, absolute and relative, implicit repeats) and the ``transform`` attribute
(section 7.6: matrix, translate, scale, rotate, skewX, skewY). Every drawn segment becomes
one or more cubic Bezier pieces in the file's own coordinates:

- lines and quadratic curves exactly (degree elevation);
- elliptical arcs (implementation notes F.6.5 and F.6.6: radii scaled up when too small,
  zero radius means a straight line) as pieces of at most 45 degrees of the ellipse's
  angle each, whose largest distance from the true ellipse is about 4.2e-6 of its larger
  radius (the usual tangent-length rule ``4/3 tan(angle/4)``; common practice).

Each drawn segment keeps its number in the path (1-based, in drawing order, the closing
line of ``Z`` included) and a short description with the file's own coordinates, so
messages can point at the user's segment rather than at sample numbers.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

import numpy as np

from .sampling import CurveError

_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_SEPARATOR = re.compile(r"[\s,]*")
_FLAG = re.compile(r"[01]")
_COMMANDS = "MmZzLlHhVvCcSsQqTtAa"
_ARITY = {"M": 2, "L": 2, "H": 1, "V": 1, "C": 6, "S": 4, "Q": 4, "T": 2, "A": 7, "Z": 0}
#: Largest angle of the ellipse one arc piece covers, radians.
ARC_PIECE = math.pi / 4


@dataclass
class Subpath:
    """One subpath of a path, as cubic pieces in the file's coordinates.

    pieces : (k, 4, 2) float64 control points, in order
    segment : (k,) int64, the drawn segment (1-based number in the path) of each piece
    start, end : (2,) float64, where the subpath starts and where its last segment ends
    closed_by_z : the subpath ended with Z (which drew a closing line if needed)
    """

    pieces: np.ndarray
    segment: np.ndarray
    start: np.ndarray
    end: np.ndarray
    closed_by_z: bool


@dataclass
class PathData:
    """A parsed ``d`` attribute: its subpaths and a description of each drawn segment."""

    subpaths: list[Subpath] = field(default_factory=list)
    descriptions: dict[int, str] = field(default_factory=dict)
    segments: int = 0


def _fmt(p) -> str:
    return f"({p[0]:.6g}, {p[1]:.6g})"


def _line(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return np.stack([a, a + (b - a) / 3.0, a + 2.0 * (b - a) / 3.0, b])


def _quadratic(a: np.ndarray, c: np.ndarray, b: np.ndarray) -> np.ndarray:
    return np.stack([a, a + 2.0 / 3.0 * (c - a), b + 2.0 / 3.0 * (c - b), b])


def arc_pieces(a, rx: float, ry: float, phi_deg: float, large: bool, sweep: bool, b):
    """Cubic pieces of an SVG elliptical arc from ``a`` to ``b`` (endpoint parameters).

    Returns (k, 4, 2) float64; k = 0 when the endpoints coincide (the arc is omitted),
    one straight piece when a radius is zero (SVG 1.1, F.6.6).
    """
    a, b = np.asarray(a, np.float64), np.asarray(b, np.float64)
    if np.array_equal(a, b):
        return np.zeros((0, 4, 2))
    rx, ry = abs(rx), abs(ry)
    if rx == 0.0 or ry == 0.0:
        return _line(a, b)[None]
    phi = math.radians(phi_deg % 360.0)
    cp, sp = math.cos(phi), math.sin(phi)
    hx, hy = (a - b) / 2.0
    x1, y1 = cp * hx + sp * hy, -sp * hx + cp * hy
    lam = (x1 / rx) ** 2 + (y1 / ry) ** 2
    if lam > 1.0:  # radii too small to reach: scale them up just enough (F.6.6)
        s = math.sqrt(lam)
        rx, ry = rx * s, ry * s
    num = rx * rx * ry * ry - rx * rx * y1 * y1 - ry * ry * x1 * x1
    den = rx * rx * y1 * y1 + ry * ry * x1 * x1
    coef = math.sqrt(max(num, 0.0) / den) if den > 0 else 0.0
    if large == sweep:
        coef = -coef
    cx1, cy1 = coef * rx * y1 / ry, -coef * ry * x1 / rx
    mx, my = (a + b) / 2.0
    cx, cy = cp * cx1 - sp * cy1 + mx, sp * cx1 + cp * cy1 + my
    th1 = math.atan2((y1 - cy1) / ry, (x1 - cx1) / rx)
    th2 = math.atan2((-y1 - cy1) / ry, (-x1 - cx1) / rx)
    dth = th2 - th1
    if sweep and dth < 0:
        dth += 2 * math.pi
    elif not sweep and dth > 0:
        dth -= 2 * math.pi
    n = max(1, math.ceil(abs(dth) / ARC_PIECE - 1e-9))
    step = dth / n
    t = th1 + step * np.arange(n + 1)
    k = 4.0 / 3.0 * math.tan(step / 4.0)
    cos_t, sin_t = np.cos(t), np.sin(t)
    # points and derivatives on the unit circle, then through the ellipse's frame
    unit = np.stack([cos_t, sin_t], axis=1)
    deriv = np.stack([-sin_t, cos_t], axis=1)
    frame = np.array([[cp * rx, -sp * ry], [sp * rx, cp * ry]])
    pts = unit @ frame.T + [cx, cy]
    der = deriv @ frame.T
    pieces = np.stack([pts[:-1], pts[:-1] + k * der[:-1], pts[1:] - k * der[1:], pts[1:]], axis=1)
    pieces[0, 0], pieces[-1, 3] = a, b  # exact ends
    return pieces


class _Scanner:
    def __init__(self, text: str, label: str):
        self.s, self.i, self.label = text, 0, label

    def skip(self) -> None:
        self.i = _SEPARATOR.match(self.s, self.i).end()

    def at_number(self) -> bool:
        self.skip()
        return self.i < len(self.s) and _NUMBER.match(self.s, self.i) is not None

    def number(self) -> float:
        self.skip()
        m = _NUMBER.match(self.s, self.i)
        if m is None:
            raise self.error("a number")
        self.i = m.end()
        return float(m.group())

    def flag(self) -> bool:
        self.skip()
        m = _FLAG.match(self.s, self.i)
        if m is None:
            raise self.error("an arc flag (0 or 1)")
        self.i = m.end()
        return m.group() == "1"

    def error(self, wanted: str) -> CurveError:
        near = self.s[max(0, self.i - 20) : self.i + 20]
        return CurveError(
            f"{self.label}: unreadable path data at character {self.i}: expected {wanted} "
            f"near {near!r}"
        )


def parse_path_data(d: str, *, label: str = "path", max_segments: int = 100_000) -> PathData:
    """Parse an SVG path data string into subpaths of cubic pieces (file coordinates).

    Raises CurveError naming ``label`` and the character position on malformed data and
    when the path has more than ``max_segments`` drawn segments.
    """
    sc = _Scanner(d, label)
    out = PathData()
    cur = np.zeros(2)
    start = np.zeros(2)
    pieces: list[np.ndarray] = []
    owners: list[int] = []
    last_cubic_ctrl = last_quad_ctrl = None
    cmd = ""

    def finish(closed_by_z: bool) -> None:
        if pieces:
            arr = np.concatenate(pieces)
            seg = np.concatenate(
                [np.full(len(p), o, np.int64) for p, o in zip(pieces, owners, strict=True)]
            )
            out.subpaths.append(Subpath(arr, seg, start.copy(), cur.copy(), closed_by_z))
        pieces.clear()
        owners.clear()

    def add(kind: str, arr: np.ndarray, a: np.ndarray, b: np.ndarray) -> None:
        out.segments += 1
        if out.segments > max_segments:
            raise CurveError(f"{label}: more than {max_segments} segments")
        out.descriptions[out.segments] = f"segment {out.segments} ('{kind}' {_fmt(a)} to {_fmt(b)})"
        if len(arr):
            pieces.append(arr)
            owners.append(out.segments)

    sc.skip()
    while sc.i < len(d):
        ch = d[sc.i]
        if ch in _COMMANDS:
            cmd = ch
            sc.i += 1
        elif not cmd or cmd in "Zz" or not sc.at_number():
            raise sc.error("a path command letter")
        elif cmd == "M":
            cmd = "L"  # implicit lineto after moveto
        elif cmd == "m":
            cmd = "l"
        up, rel = cmd.upper(), cmd.islower()
        if up == "Z":
            if not np.array_equal(cur, start):  # Z draws the closing line
                add(cmd, _line(cur, start)[None], cur, start)
            cur = start.copy()
            finish(True)
            last_cubic_ctrl = last_quad_ctrl = None
            sc.skip()
            continue
        if not sc.at_number():
            raise sc.error(f"numbers after '{cmd}'")
        while True:
            base = cur if rel else np.zeros(2)
            if up == "M":
                finish(False)
                cur = base + [sc.number(), sc.number()]
                start = cur.copy()
                last_cubic_ctrl = last_quad_ctrl = None
                if sc.at_number():  # further pairs are lines
                    up = "L"
                    cmd = "l" if rel else "L"
                    continue
                break
            a = cur.copy()
            cubic = quad = None
            if up == "L":
                b = base + [sc.number(), sc.number()]
                arr = _line(a, b)[None]
            elif up == "H":
                b = np.array([sc.number() + (cur[0] if rel else 0.0), cur[1]])
                arr = _line(a, b)[None]
            elif up == "V":
                b = np.array([cur[0], sc.number() + (cur[1] if rel else 0.0)])
                arr = _line(a, b)[None]
            elif up in "CS":
                if up == "C":
                    c1 = base + [sc.number(), sc.number()]
                else:
                    c1 = 2 * a - last_cubic_ctrl if last_cubic_ctrl is not None else a.copy()
                c2 = base + [sc.number(), sc.number()]
                b = base + [sc.number(), sc.number()]
                arr = np.stack([a, c1, c2, b])[None]
                cubic = c2
            elif up in "QT":
                if up == "Q":
                    c = base + [sc.number(), sc.number()]
                else:
                    c = 2 * a - last_quad_ctrl if last_quad_ctrl is not None else a.copy()
                b = base + [sc.number(), sc.number()]
                arr = _quadratic(a, c, b)[None]
                quad = c
            else:  # A
                rx, ry, rot = sc.number(), sc.number(), sc.number()
                large, sweep = sc.flag(), sc.flag()
                b = base + [sc.number(), sc.number()]
                arr = arc_pieces(a, rx, ry, rot, large, sweep, b)
            if not np.all(np.isfinite(arr)) or not np.all(np.isfinite(b)):
                raise CurveError(
                    f"{label}: segment {out.segments + 1} has a coordinate that "
                    "is not a finite number"
                )
            add(cmd, arr, a, b)
            cur = b
            last_cubic_ctrl, last_quad_ctrl = cubic, quad
            if not sc.at_number():
                break
    finish(False)
    return out


_TRANSFORM = re.compile(r"\s*(matrix|translate|scale|rotate|skewX|skewY)\s*\(([^()]*)\)\s*,?")


def parse_transform(text: str, *, label: str = "transform") -> np.ndarray:
    """The 3x3 affine matrix of an SVG ``transform`` attribute (float64).

    A list of transforms applies right to left to the points (the first listed is the
    outermost), as SVG 1.1 section 7.6 says.
    """
    m = np.eye(3)
    pos = 0
    text = text.strip()
    while pos < len(text):
        hit = _TRANSFORM.match(text, pos)
        if hit is None:
            raise CurveError(f"{label}: unreadable transform {text[:60]!r} at character {pos}")
        pos = hit.end()
        name, args_text = hit.group(1), hit.group(2)
        args = [float(x) for x in _NUMBER.findall(args_text)]
        leftover = _NUMBER.sub("", args_text).replace(",", "").strip()
        allowed = {
            "matrix": (6,),
            "translate": (1, 2),
            "scale": (1, 2),
            "rotate": (1, 3),
            "skewX": (1,),
            "skewY": (1,),
        }[name]
        if leftover or len(args) not in allowed or not all(map(math.isfinite, args)):
            raise CurveError(f"{label}: unreadable transform {hit.group().strip()!r}")
        t = np.eye(3)
        if name == "matrix":
            t[:2] = np.array(args).reshape(3, 2).T
        elif name == "translate":
            t[0, 2], t[1, 2] = args[0], args[1] if len(args) == 2 else 0.0
        elif name == "scale":
            t[0, 0], t[1, 1] = args[0], args[1] if len(args) == 2 else args[0]
        elif name == "rotate":
            r = math.radians(args[0])
            c, s = math.cos(r), math.sin(r)
            rot = np.array([[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]])
            if len(args) == 3:
                cx, cy = args[1], args[2]
                move = np.array([[1.0, 0, cx], [0, 1.0, cy], [0, 0, 1.0]])
                back = np.array([[1.0, 0, -cx], [0, 1.0, -cy], [0, 0, 1.0]])
                rot = move @ rot @ back
            t = rot
        elif name == "skewX":
            t[0, 1] = math.tan(math.radians(args[0]))
        else:
            t[1, 0] = math.tan(math.radians(args[0]))
        m = m @ t
    return m
