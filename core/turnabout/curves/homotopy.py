"""Regular homotopies between closed plane curves of equal turning number.

Whitney-Graustein theorem (Whitney, "On regular closed curves in the plane",
Compositio Mathematica 4, 1937): two closed regular plane curves are regularly
homotopic if and only if they have the same turning number. The construction here
follows the proof of the "if" part (see docs/curves.md for the derivation):

1. resample both curves to N points equally spaced in arc length and match their base
   points (the start of the second is shifted to where its tangent-angle function best
   matches the first's);
2. take continuous tangent-angle functions theta_a, theta_b with the same total change
   2*pi*n, and the step lengths l_a, l_b;
3. at eased time s, interpolate: theta_s = (1-s) theta_a + s theta_b + w(s) * wobble,
   l_s = (1-s) l_a + s l_b, steps v_k = l_s,k * exp(i theta_s,k);
4. correct the closure: subtract the mean step from every step, so the steps sum to zero;
   the speed stays positive as long as the mean step is shorter than every step, which
   holds unless theta_s is nearly constant;
5. integrate (cumulative sum) and place the centroid on the straight line between the
   two centroids.

For turning number 0 the interpolated angle can be nearly constant (for example between
a figure-eight and its mirror image, at s = 1/2), where step 4 collapses the curve. A
wobble ``w(s) a sin(2 pi k / N + phase)`` with w(0) = w(1) = 0 is then added; its amplitude
and phase (and the base-point match) are chosen by measuring the lowest speed on a
coarse grid of times.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..easing import quintic_step
from ..progress import ProgressFn, no_progress
from .sampling import (
    CUSP_TURN,
    MAX_SAMPLES,
    MIN_POINTS,
    CurveError,
    closed_curve,
    resample_by_arc_length,
    step_vectors,
    turn_angles,
)
from .turning import tangent_angles, turning_number, turning_number_by_total_turning

#: Most points (frames x samples) one homotopy may hold, about 320 MB as float64.
MAX_FRAME_POINTS = 20_000_000
#: Most frames.
MAX_FRAMES = 100_000
#: Frames x samples evaluated in one block.
BLOCK_POINTS = 1_000_000
EASINGS = ("smooth", "linear")


class HomotopyRefused(ValueError):
    """No regular homotopy exists: the two curves have different turning numbers."""

    def __init__(self, turning_a: int, turning_b: int, names: tuple[str, str] = ("A", "B")):
        self.turning_a = int(turning_a)
        self.turning_b = int(turning_b)
        super().__init__(
            f"no regular homotopy from {names[0]} (turning number {self.turning_a}) to "
            f"{names[1]} (turning number {self.turning_b}): the turning number stays the "
            "same through every regular homotopy (Whitney-Graustein theorem), so these "
            "curves cannot be deformed into each other without a cusp or a corner"
        )


class HomotopyCheckFailed(RuntimeError):
    """A computed frame failed the regularity check (names the frame and the figure)."""


def ease(times, easing: str = "smooth") -> np.ndarray:
    """Eased times in [0, 1].

    ``smooth``: the quintic step 6t^5 - 15t^4 + 10t^3 of :mod:`turnabout.easing`, zero
    speed and acceleration at both ends; ``linear``: unchanged.
    times : (F,) float in [0, 1] -> (F,) float64.
    """
    t = np.asarray(times, dtype=np.float64)
    if easing == "linear":
        return t.copy()
    if easing == "smooth":
        return quintic_step(t)
    raise CurveError(f"easing: {easing!r} is not one of {', '.join(EASINGS)}")


@dataclass(frozen=True)
class HomotopyPlan:
    """Everything a regular homotopy needs, validated; evaluate with :func:`homotopy_points`.

    start, end : (N, 2) float64, the two curves resampled by arc length; ``end`` starts at
        the matched base point (point ``end_shift`` of the resampled second curve)
    theta_start, theta_end : (N,) float64, tangent-angle lifts with the same total change
    steps_start, steps_end : (N,) float64, step lengths
    turning_number : int
    end_shift : int, base-point shift of the second curve, in samples
    wobble_amplitude, wobble_phase : the turning-number-0 safeguard (0 when unused)
    lowest_speed_estimate : lowest speed over a coarse grid of times, relative to the mean
    """

    start: np.ndarray
    end: np.ndarray
    theta_start: np.ndarray
    theta_end: np.ndarray
    steps_start: np.ndarray
    steps_end: np.ndarray
    turning_number: int
    end_shift: int
    wobble_amplitude: float
    wobble_phase: float
    lowest_speed_estimate: float

    @property
    def samples(self) -> int:
        return int(self.start.shape[0])


def require_same_turning_number(
    a: np.ndarray, b: np.ndarray, names=("A", "B"), direction: float = 0.0
) -> int:
    """The common turning number of two closed curves, or HomotopyRefused naming both."""
    na, nb = turning_number(a, direction), turning_number(b, direction)
    if na != nb:
        raise HomotopyRefused(na, nb, tuple(names))
    return na


def _shifted_lift(theta: np.ndarray, shift: int, n_turn: int) -> np.ndarray:
    """Tangent-angle lift of the same curve started ``shift`` steps later."""
    n = theta.shape[0]
    idx = np.arange(n) + shift
    return theta[idx % n] + 2 * np.pi * n_turn * (idx // n)


def _frame_steps(theta_a, theta_b, len_a, len_b, s, amp, phase):
    """Closure-corrected complex steps at eased times s: (F,) -> (F, N) complex128."""
    n = theta_a.shape[-1]
    s = s[:, None]
    wob = amp * np.sin(np.pi * s) ** 2 * np.sin(2 * np.pi * np.arange(n) / n + phase)
    theta = (1.0 - s) * theta_a + s * theta_b + wob
    steps = ((1.0 - s) * len_a + s * len_b) * np.exp(1j * theta)
    return steps - steps.mean(axis=1, keepdims=True)


def _lowest_speed(theta_a, theta_b, len_a, len_b, amp, phase, grid) -> float:
    v = _frame_steps(theta_a, theta_b, len_a, len_b, grid, amp, phase)
    sp = np.abs(v)
    return float((sp.min(axis=1) / sp.mean(axis=1)).min())


def _peak_shifts(score: np.ndarray, count: int) -> np.ndarray:
    """Indices of the ``count`` highest local maxima of a circular score."""
    peaks = np.flatnonzero((score >= np.roll(score, 1)) & (score >= np.roll(score, -1)))
    return peaks[np.argsort(-score[peaks], kind="stable")][:count]


def _candidate_shifts(theta_a, theta_b, za, zb, n_turn: int, count: int) -> np.ndarray:
    """Base-point shifts of the second curve worth trying, by two circular correlations (FFT).

    - shape: the periodic parts theta - 2 pi n k / N of the tangent-angle functions agree
      best (largest cross-correlation, i.e. least mean squared difference up to a constant);
    - travel: the points, centroids removed, lie closest (largest Re sum conj(a_k) b_(k+d)).
    """
    n = theta_a.shape[0]
    ramp = 2 * np.pi * n_turn * np.arange(n) / n
    fa = theta_a - ramp
    fb = theta_b - ramp
    fa = fa - fa.mean()
    fb = fb - fb.mean()
    # corr[d] = sum over k of fa[k] * fb[k + d]
    corr = np.fft.irfft(np.conj(np.fft.rfft(fa)) * np.fft.rfft(fb), n)
    za = za - za.mean()
    zb = zb - zb.mean()
    near = np.fft.ifft(np.conj(np.fft.fft(za)) * np.fft.fft(zb)).real
    found = [_peak_shifts(corr, count), _peak_shifts(near, count), np.zeros(1, np.int64)]
    return np.unique(np.concatenate(found).astype(np.int64))


def _travel(za, zb, shift: int) -> float:
    """Mean distance a point moves from curve a to curve b started ``shift`` later."""
    return float(np.abs((za - za.mean()) - np.roll(zb - zb.mean(), -shift)).mean())


def plan_homotopy(
    a,
    b,
    *,
    samples: int | None = None,
    names: tuple[str, str] = ("A", "B"),
    direction: float = 0.0,
    match_base_points: bool = True,
) -> HomotopyPlan:
    """Validate two closed curves and prepare a regular homotopy between them.

    a, b : (Na, 2), (Nb, 2) float, closed curves (first point not repeated)
    samples : points per frame (default: the larger of Na, Nb, within 64..8192)
    match_base_points : shift the start of ``b`` to where its tangent-angle function best
        matches that of ``a``; if False, point 0 of ``a`` goes to point 0 of ``b``
    Raises CurveError for bad input and HomotopyRefused when the turning numbers differ.
    """
    a = closed_curve(a, name=names[0])
    b = closed_curve(b, name=names[1])
    n_turn = require_same_turning_number(a, b, names, direction)
    if samples is None:
        samples = int(np.clip(max(a.shape[0], b.shape[0]), 64, 8192))
    if isinstance(samples, bool) or not isinstance(samples, (int, np.integer)):
        raise CurveError(f"samples: must be an integer, got {samples!r}")
    if not max(MIN_POINTS, 16) <= samples <= MAX_SAMPLES:
        raise CurveError(f"samples: {samples} is outside 16..{MAX_SAMPLES}")
    n = int(samples)
    ra = resample_by_arc_length(a, n)
    rb = resample_by_arc_length(b, n)
    for name, r in zip(names, (ra, rb), strict=True):
        if np.abs(turn_angles(r)).max() > CUSP_TURN:
            raise CurveError(f"{name}: too sharp for {n} samples; use more samples")
        if turning_number_by_total_turning(r) != n_turn:
            raise CurveError(
                f"{name}: {n} samples do not resolve the curve (its turning "
                "number changes when resampled); use more samples"
            )
    theta_a, theta_b = tangent_angles(ra), tangent_angles(rb)
    len_a = np.linalg.norm(step_vectors(ra), axis=1)
    len_b = np.linalg.norm(step_vectors(rb), axis=1)

    # coarse copies for choosing the base-point match and the wobble
    stride = max(1, n // 256)
    ca, cb = theta_a[::stride], theta_b[::stride]
    la, lb = len_a[::stride], len_b[::stride]
    grid = np.linspace(0.0, 1.0, 17)
    za = ra[::stride, 0] + 1j * ra[::stride, 1]
    zb = rb[::stride, 0] + 1j * rb[::stride, 1]
    wobbles = [(0.0, 0.0)] + [
        (amp, ph) for amp in (1.2, 2.4) for ph in (0.0, 0.5 * np.pi, np.pi, 1.5 * np.pi)
    ]
    cands = []  # (score, travel, extra rotation in turns, shift, lift, amp, phase)
    shifts = _candidate_shifts(ca, cb, za, zb, n_turn, 4) if match_base_points else [0]
    for shift in shifts:
        tb = _shifted_lift(cb, int(shift), n_turn)
        lbs = np.roll(lb, -int(shift))
        travel = _travel(za, zb, int(shift))
        lift0 = -np.round((tb - ca).mean() / (2 * np.pi))
        for lift in (lift0, lift0 - 1, lift0 + 1):
            tbl = tb + 2 * np.pi * lift
            for amp, phase in wobbles:
                score = _lowest_speed(ca, tbl, la, lbs, amp, phase, grid)
                cands.append(
                    (score, travel, abs(lift - lift0), int(shift) * stride, float(lift), amp, phase)
                )
    best = max(c[0] for c in cands)
    # the plain interpolation (no wobble) whenever it keeps a fair speed; among those, the
    # match that moves the points least, then the one that turns least
    fair = [c for c in cands if c[5] == 0.0 and c[0] >= max(0.1, 0.5 * best)]
    if fair:
        chosen = min(fair, key=lambda c: (round(c[1], 9), c[2], -c[0]))
    else:
        chosen = max(cands, key=lambda c: c[0])
    _, _, _, shift, lift, amp, phase = chosen
    tb = _shifted_lift(theta_b, shift, n_turn) + 2 * np.pi * lift
    return HomotopyPlan(
        start=ra,
        end=np.roll(rb, -shift, axis=0),
        theta_start=theta_a,
        theta_end=tb,
        steps_start=len_a,
        steps_end=np.roll(len_b, -shift),
        turning_number=n_turn,
        end_shift=shift,
        wobble_amplitude=float(amp),
        wobble_phase=float(phase),
        lowest_speed_estimate=float(chosen[0]),
    )


def homotopy_points(plan: HomotopyPlan, s, progress: ProgressFn = no_progress) -> np.ndarray:
    """Points of the homotopy at eased times ``s``.

    s : (F,) float in [0, 1] (0 gives ``plan.start``, 1 gives ``plan.end`` exactly)
    Returns (F, N, 2) float64.
    """
    s = np.atleast_1d(np.asarray(s, dtype=np.float64))
    if s.ndim != 1 or not np.all(np.isfinite(s)) or s.min() < 0 or s.max() > 1:
        raise CurveError("times: every time must be a finite number in [0, 1]")
    f, n = s.shape[0], plan.samples
    if f * n > MAX_FRAME_POINTS:
        raise CurveError(f"{f} frames x {n} samples is more than {MAX_FRAME_POINTS} points")
    out = np.empty((f, n, 2))
    ca, cb = plan.start.mean(axis=0), plan.end.mean(axis=0)
    block = max(1, BLOCK_POINTS // n)
    for i0 in range(0, f, block):  # blocks of frames, each vectorised over frames and points
        ss = s[i0 : i0 + block]
        v = _frame_steps(
            plan.theta_start,
            plan.theta_end,
            plan.steps_start,
            plan.steps_end,
            ss,
            plan.wobble_amplitude,
            plan.wobble_phase,
        )
        z = np.cumsum(v, axis=1)
        z = np.concatenate([np.zeros((z.shape[0], 1), complex), z[:, :-1]], axis=1)
        pts = np.stack([z.real, z.imag], axis=-1)
        centre = (1.0 - ss)[:, None] * ca + ss[:, None] * cb
        pts += (centre - pts.mean(axis=1))[:, None, :]
        out[i0 : i0 + ss.shape[0]] = pts
        progress(min(f, i0 + block), f)
    out[s == 0.0] = plan.start  # equal up to rounding already; make the ends exact
    out[s == 1.0] = plan.end
    return out


@dataclass(frozen=True)
class FrameChecks:
    """Regularity figures of each frame of a closed-curve animation.

    min_speed : (F,) float64, shortest step / mean step (speed bounded away from zero)
    max_turn : (F,) float64, largest turn at one point, radians
    max_curvature : (F,) float64, largest discrete curvature, 1 / length unit
    bend : (F,) float64, max curvature x length / (2 pi): scale-free, 1 for a circle
    closure_gap : (F,) float64, distance between the last point and the first, over the
        mean step (the closing step must look like every other: about 1)
    turning_number : (F,) int64
    passes : (F,) bool, every figure within the limits
    limits : the limits used (min_speed, max_turn, turning_number)
    """

    min_speed: np.ndarray
    max_turn: np.ndarray
    max_curvature: np.ndarray
    bend: np.ndarray
    closure_gap: np.ndarray
    turning_number: np.ndarray
    passes: np.ndarray
    limits: dict

    @property
    def all_pass(self) -> bool:
        return bool(self.passes.all())

    def first_failure(self) -> str | None:
        """A sentence naming the first failing frame and figure, or None."""
        bad = np.flatnonzero(~self.passes)
        if bad.size == 0:
            return None
        k = int(bad[0])
        lim = self.limits
        if self.turning_number[k] != lim["turning_number"]:
            why = f"turning number {self.turning_number[k]} instead of {lim['turning_number']}"
        elif self.min_speed[k] < lim["min_speed"]:
            why = f"speed {self.min_speed[k]:.3g} of the mean, below {lim['min_speed']:.3g}"
        else:
            why = f"a turn of {self.max_turn[k]:.3g} rad at one point, above {lim['max_turn']:.3g}"
        return f"frame {k}: {why} ({bad.size} failing frames)"


def check_curve_frames(
    frames: np.ndarray,
    *,
    turning: int | None = None,
    min_speed: float = 0.05,
    max_turn: float = 0.5 * np.pi,
) -> FrameChecks:
    """Check every frame of a closed-curve animation for regularity.

    frames : (F, N, 2) float, closed curves (first point not repeated)
    turning : the turning number every frame must have (default: that of frame 0)
    min_speed : lowest allowed shortest-step / mean-step ratio
    max_turn : largest allowed turn at one point, radians (curvature times step)
    """
    p = np.asarray(frames, dtype=np.float64)
    if p.ndim != 3 or p.shape[2] != 2 or p.shape[1] < MIN_POINTS:
        raise CurveError(f"frames: expected (F, N, 2) with N >= {MIN_POINTS}, got {p.shape}")
    d = step_vectors(p)
    ln = np.linalg.norm(d, axis=-1)
    mean = ln.mean(axis=-1)
    turns = turn_angles(p)
    local = 0.5 * (ln + np.roll(ln, 1, axis=-1))
    with np.errstate(divide="ignore", invalid="ignore"):
        curv = np.where(local > 0, np.abs(turns) / local, np.inf)
    max_curv = curv.max(axis=-1)
    tn = np.rint(turns.sum(axis=-1) / (2 * np.pi)).astype(np.int64)
    expected = int(tn[0]) if turning is None else int(turning)
    speed = ln.min(axis=-1) / mean
    mturn = np.abs(turns).max(axis=-1)
    passes = (speed >= min_speed) & (mturn <= max_turn) & (tn == expected) & np.isfinite(speed)
    return FrameChecks(
        min_speed=speed,
        max_turn=mturn,
        max_curvature=max_curv,
        bend=max_curv * ln.sum(axis=-1) / (2 * np.pi),
        closure_gap=ln[..., -1] / mean,
        turning_number=tn,
        passes=passes,
        limits={
            "min_speed": float(min_speed),
            "max_turn": float(max_turn),
            "turning_number": expected,
        },
    )


@dataclass(frozen=True)
class CurveHomotopy:
    """A baked regular homotopy between two closed plane curves.

    points : (F, N, 2) float64; points[0] is the first curve, points[-1] the second
        (both resampled by arc length, the second from the matched base point)
    times : (F,) float64, evenly spaced in [0, 1]
    eased : (F,) float64, the interpolation parameter at each frame
    checks : FrameChecks of every frame
    plan : the HomotopyPlan it was evaluated from
    """

    points: np.ndarray
    times: np.ndarray
    eased: np.ndarray
    checks: FrameChecks
    plan: HomotopyPlan

    @property
    def turning_number(self) -> int:
        return self.plan.turning_number


def regular_homotopy(
    a,
    b,
    *,
    frames: int = 120,
    samples: int | None = None,
    easing: str = "smooth",
    names: tuple[str, str] = ("A", "B"),
    direction: float = 0.0,
    match_base_points: bool = True,
    min_speed: float = 0.05,
    max_turn: float | None = None,
    progress: ProgressFn = no_progress,
) -> CurveHomotopy:
    """A regular homotopy from closed curve ``a`` to closed curve ``b``, checked frame by frame.

    a, b : (Na, 2), (Nb, 2) float closed curves
    frames : number of frames, 2..MAX_FRAMES, evenly spaced in time and eased
    samples : points per frame (see :func:`plan_homotopy`)
    easing : one of EASINGS
    match_base_points : see :func:`plan_homotopy`
    min_speed, max_turn : check limits (see :func:`check_curve_frames`); ``max_turn``
        defaults to 3 times the sharpest turn of the two curves, at least pi/8, at most pi/2
    Raises CurveError (bad input), HomotopyRefused (different turning numbers) or
    HomotopyCheckFailed (a frame failed the check; names the frame and the figure).
    """
    if isinstance(frames, bool) or not isinstance(frames, (int, np.integer)):
        raise CurveError(f"frames: must be an integer, got {frames!r}")
    if not 2 <= frames <= MAX_FRAMES:
        raise CurveError(f"frames: {frames} is outside 2..{MAX_FRAMES}")
    if easing not in EASINGS:
        raise CurveError(f"easing: {easing!r} is not one of {', '.join(EASINGS)}")
    plan = plan_homotopy(
        a, b, samples=samples, names=names, direction=direction, match_base_points=match_base_points
    )
    times = np.linspace(0.0, 1.0, int(frames))
    eased = ease(times, easing)
    pts = homotopy_points(plan, eased, progress=progress)
    if max_turn is None:
        sharpest = max(np.abs(turn_angles(plan.start)).max(), np.abs(turn_angles(plan.end)).max())
        max_turn = float(np.clip(3.0 * sharpest, np.pi / 8, np.pi / 2))
    checks = check_curve_frames(
        pts, turning=plan.turning_number, min_speed=min_speed, max_turn=max_turn
    )
    failure = checks.first_failure()
    if failure is not None:
        raise HomotopyCheckFailed(
            f"the homotopy from {names[0]} to {names[1]} is not regular at {failure}; "
            "try more samples"
        )
    return CurveHomotopy(points=pts, times=times, eased=eased, checks=checks, plan=plan)
