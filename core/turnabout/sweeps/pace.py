"""Frames needed: how far the vertices move per frame, a model of it, and window tuning.

The *step* of a vertex between two frames is its move divided by its local edge length (the
mean length of the edges at the vertex, averaged over the two frames): the frame checker's
``step`` metric (docs/checker.md), computed here the same way for the eversion's own frames.
A motion is paced well when its largest step is at most :data:`STEP_LIMIT`.

Reads in order:

* :func:`largest_step` bakes the real frames (float32, as ``build`` stores them) and
  returns the largest step; :func:`frames_needed` the smallest whole second of frames
  (a multiple of :data:`FPS`) whose largest step is within the limit.
* :class:`PaceModel` samples the step rates of the shape by stage state: per unit of turn
  with the waves at full depth, s_p(turn) = max_v |dF/dturn| / len_v, and per unit of wave
  amplitude at the start and at the end. The rate of a timing is then, per unit of time,
  s_p(turn(t)) |turn'(t)| + s_w |waves'(t)|, and ``frames - 1`` must be at least its
  maximum over t divided by the limit (docs/eversion.md, section 8).
* :func:`tune_timing` minimises that maximum over the stage windows (Nelder-Mead on the
  model, under the constraints of :func:`timing_problem`), from a given start.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

import numpy as np

from ..easing import quintic_step
from ..eversion.construction import TURN_SHARES, FrameEvaluator, StageState
from ..eversion.controls import STAGE_NAMES, ControlError, Controls
from ..mesh import SphereMesh
from ..progress import ProgressFn, no_progress

STEP_LIMIT = 0.95  # the largest step a default frame count allows (docs/eversion.md, 8)
FPS = 24  # default frame counts are whole seconds at this rate
# Constraints on tuned windows (docs/eversion.md, section 8): the waves are at full depth
# while the turn is between FULL_WAVES_TURN and 1 - FULL_WAVES_TURN; ripple and calm last at
# least MIN_WAVE_STAGE; tuck ends by LAST_TUCK_END.
FULL_WAVES_TURN = 0.005
FULL_WAVES_TOLERANCE = 0.005  # "full depth": the waves at least 1 - this of their depth
# (the windows chosen by hand have 0.9961 where the turn reaches 0.995)
MIN_WAVE_STAGE = 0.08
LAST_TUCK_END = 0.97
WINDOW_DIGITS = 3  # tuned windows are rounded to a thousandth of the motion
MODEL_TIMES = 4001  # times at which the model's rate is maximised

# The windows chosen by hand for 8 strips (docs/eversion.md, section 8), minimising the
# model's largest rate under the constraints below: the start of every window search, and
# the windows a strip count keeps unless tuned ones save a whole second.
REFERENCE_TIMING: dict[str, tuple[float, float]] = {
    "ripple": (0.0, 0.103),
    "swap": (0.052, 0.51),
    "twist": (0.315, 0.752),
    "tuck": (0.586, 0.97),
    "calm": (0.92, 1.0),
}


class LocalLengths:
    """The mean length of the edges at each vertex, for one fixed set of faces.

    Each face's two edges at a vertex are counted once per face, as the checker's
    ``local_length`` does: an edge shared by k faces weighs k. Call with positions
    P : (V, 3) float; returns (V,) float64.
    """

    def __init__(self, faces: np.ndarray, n_vertices: int):
        f = np.asarray(faces, np.int64)
        a = f.ravel()
        b = f[:, [1, 2, 0]].ravel()
        lo, hi = np.minimum(a, b), np.maximum(a, b)
        key, weight = np.unique(lo * n_vertices + hi, return_counts=True)
        self._a = (key // n_vertices).astype(np.intp)
        self._b = (key % n_vertices).astype(np.intp)
        self._ends = np.concatenate([self._a, self._b])
        self._weight = weight.astype(np.float64)
        degree = np.bincount(a, minlength=n_vertices).astype(np.float64)
        self._scale = np.where(degree > 0, 0.5 / np.maximum(degree, 1.0), 0.0)
        self.n_vertices = n_vertices

    def __call__(self, P: np.ndarray) -> np.ndarray:
        P = np.asarray(P, np.float64)
        a, b = self._a, self._b
        d = np.zeros(a.size)
        for c in range(3):
            x = np.ascontiguousarray(P[:, c])
            e = x.take(b) - x.take(a)
            d += e * e
        w = np.sqrt(d) * self._weight
        total = np.bincount(self._ends, np.concatenate([w, w]), minlength=self.n_vertices)
        return total * self._scale


@dataclass(frozen=True)
class StepResult:
    """The largest step over a baked motion: its value, the frame it ends on (1-based index
    into the frames: the step from frame k - 1 to frame k) and the frame count."""

    largest: float
    frame: int
    frames: int


def largest_step(
    controls: Controls, frames: int, mesh: SphereMesh, progress: ProgressFn = no_progress
) -> StepResult:
    """The largest step over ``frames`` evenly spaced frames from t = 0 to 1 on ``mesh``.

    Frames are evaluated into float32 like :func:`~turnabout.eversion.build`, one at a time
    (memory: two frames).
    """
    if isinstance(frames, bool) or not isinstance(frames, (int, np.integer)) or frames < 2:
        raise ControlError("frames", f"must be an integer >= 2, got {frames!r}")
    lengths = LocalLengths(mesh.triangles(), mesh.n_vertices)
    ev = FrameEvaluator(controls, mesh)
    times = np.linspace(0.0, 1.0, int(frames))
    buf = np.empty((mesh.n_vertices, 3), np.float32)
    prev = ev(float(times[0]), buf).astype(np.float64)
    prev_len = lengths(prev)
    best, at = 0.0, 0
    for k in range(1, times.size):
        cur = ev(float(times[k]), buf).astype(np.float64)
        cur_len = lengths(cur)
        mean_len = np.maximum(0.5 * (cur_len + prev_len), np.finfo(np.float64).tiny)
        s = float((np.linalg.norm(cur - prev, axis=1) / mean_len).max())
        if s > best:
            best, at = s, k
        prev, prev_len = cur, cur_len
        progress(k, times.size - 1)
    return StepResult(best, at, int(frames))


def frames_needed(
    controls: Controls,
    mesh: SphereMesh,
    guess: int | None = None,
    limit: float = STEP_LIMIT,
    progress: ProgressFn = no_progress,
) -> StepResult:
    """The smallest multiple of :data:`FPS` frames whose largest step is at most ``limit``.

    Starts at ``guess`` (rounded up to a whole second; default 20 s) and walks a second at a
    time: up while the step is over the limit, down while the one below still fits (the
    largest step falls as the frames grow, about as 1 / (frames - 1)). Returns the result
    at the frame count found.
    """
    f = FPS * max(1, math.ceil((guess or 20 * FPS) / FPS))
    cache: dict[int, StepResult] = {}

    def at(n: int) -> StepResult:
        if n not in cache:
            cache[n] = largest_step(controls, n, mesh, progress)
        return cache[n]

    while at(f).largest > limit:
        f += FPS
    while f > FPS and at(f - FPS).largest <= limit:
        f -= FPS
    return at(f)


# --------------------------------------------------------------------------- the model


def _state_rates(ev: FrameEvaluator, lengths, states, h: float, wrt: str) -> np.ndarray:
    """max_v |dF/dx| / len_v at each (turn, waves), x the turn or the waves; (k,) float64.

    Central differences of step h, one-sided at the ends of [0, 1]."""
    out = np.empty(len(states))
    for i, (turn, waves) in enumerate(states):
        x = turn if wrt == "turn" else waves
        lo, hi = max(0.0, x - h), min(1.0, x + h)

        def shape(v, turn=turn, waves=waves):
            st = StageState(v, waves) if wrt == "turn" else StageState(turn, v)
            return ev.at_state(st)

        a, b = shape(lo), shape(hi)
        length = lengths(shape(x))
        rate = np.linalg.norm(b - a, axis=1) / (hi - lo) / np.maximum(length, 1e-300)
        out[i] = float(rate.max())
    return out


@dataclass(frozen=True)
class PaceModel:
    """Step rates of one strip count's shape on one mesh, sampled by stage state.

    turns : (k,) float64 in [0, 1]; turn_rate : (k,) max_v |dF/dturn| / len_v, waves at 1;
    grow_rate, calm_rate : max_v |dF/dwaves| / len_v over the waves, at turn 0 and turn 1.
    """

    turns: np.ndarray
    turn_rate: np.ndarray
    grow_rate: float
    calm_rate: float

    def rate(self, timing: dict, times: np.ndarray) -> np.ndarray:
        """Modelled step rate per unit time, (len(times),) float64, for these windows."""
        turn = np.zeros_like(times)
        dturn = np.zeros_like(times)
        for name, share in TURN_SHARES.items():
            a, b = timing[name]
            turn += share * quintic_step((times - a) / (b - a))
            dturn += share * _dstep(times, a, b)
        ra, rb = timing["ripple"]
        ca, cb = timing["calm"]
        grow, calm = quintic_step((times - ra) / (rb - ra)), quintic_step((times - ca) / (cb - ca))
        dgrow, dcalm = _dstep(times, ra, rb), _dstep(times, ca, cb)
        dwaves = np.abs(dgrow * (1.0 - calm) - grow * dcalm)
        wave_rate = np.where(turn < 0.5, self.grow_rate, self.calm_rate)
        s = np.interp(np.minimum(turn, 1.0), self.turns, self.turn_rate)
        return s * np.abs(dturn) + wave_rate * dwaves

    def frames_for(self, timing: dict, times: np.ndarray, limit: float = STEP_LIMIT) -> float:
        """Frames (not rounded) that the model says keep the largest step at ``limit``."""
        return float(self.rate(timing, times).max()) / limit + 1.0


def model_times(count: int = MODEL_TIMES) -> np.ndarray:
    """(count,) float64 evenly spaced times in [0, 1] at which the model is maximised."""
    return np.linspace(0.0, 1.0, count)


def _dstep(t, a: float, b: float):
    """d/dt of the quintic step over the window (a, b): 30 y^2 (1 - y)^2 / (b - a)."""
    y = np.clip((t - a) / (b - a), 0.0, 1.0)
    return 30.0 * y * y * (1.0 - y) ** 2 / (b - a)


def pace_model(
    controls: Controls, mesh: SphereMesh, samples: int = 401, progress: ProgressFn = no_progress
) -> PaceModel:
    """Sample the step rates of ``controls``' shape (strips, depth) on ``mesh``.

    samples : turns evenly spaced in [0, 1] (the wave rates take 9 amplitudes at each end).
    """
    lengths = LocalLengths(mesh.triangles(), mesh.n_vertices)
    ev = FrameEvaluator(controls, mesh)
    turns = np.linspace(0.0, 1.0, samples)
    total = samples + 2
    rates = np.empty(samples)
    for i, p in enumerate(turns):
        rates[i] = _state_rates(ev, lengths, [(float(p), 1.0)], 1e-4, "turn")[0]
        progress(i + 1, total)
    amps = np.linspace(0.0, 1.0, 9)
    grow = float(_state_rates(ev, lengths, [(0.0, float(w)) for w in amps], 1e-4, "waves").max())
    progress(samples + 1, total)
    calm = float(_state_rates(ev, lengths, [(1.0, float(w)) for w in amps], 1e-4, "waves").max())
    progress(total, total)
    return PaceModel(turns, rates, grow, calm)


# --------------------------------------------------------------------- window tuning


def timing_problem(timing: dict) -> str | None:
    """What keeps a timing from being a tuned default (docs/eversion.md, section 8), or
    None. Besides the stage-order rules of the controls: the waves at full depth while the
    turn is between 0.005 and 0.995, ripple and calm lasting at least 0.08, tuck ending by
    0.97."""
    try:
        Controls(timing=timing)
    except ControlError as exc:
        return str(exc)
    ra, rb = timing["ripple"]
    ca, cb = timing["calm"]
    if rb - ra < MIN_WAVE_STAGE - 1e-12 or cb - ca < MIN_WAVE_STAGE - 1e-12:
        return f"ripple and calm must last at least {MIN_WAVE_STAGE:g}"
    if timing["tuck"][1] > LAST_TUCK_END + 1e-12:
        return f"tuck must end by {LAST_TUCK_END:g}"
    lo, hi = _turn_reaches(timing, FULL_WAVES_TURN), _turn_reaches(timing, 1 - FULL_WAVES_TURN)
    waves = quintic_step((lo - ra) / (rb - ra)), 1.0 - quintic_step((hi - ca) / (cb - ca))
    if min(waves) < 1.0 - FULL_WAVES_TOLERANCE:
        return (
            f"the waves must be at full depth (within {FULL_WAVES_TOLERANCE:g}) while the turn "
            f"is between {FULL_WAVES_TURN:g} and {1 - FULL_WAVES_TURN:g}"
        )
    return None


def _turn(timing: dict, t):
    out = 0.0 * np.asarray(t, np.float64)
    for name, share in TURN_SHARES.items():
        a, b = timing[name]
        out = out + share * quintic_step((t - a) / (b - a))
    return out


def _turn_reaches(timing: dict, level: float) -> float:
    """The first time at which the turn reaches ``level`` (it never falls), by bisection."""
    lo, hi = 0.0, 1.0
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        if _turn(timing, mid) >= level:
            hi = mid
        else:
            lo = mid
    return hi


# The free parameters: ripple end, then the start and end of swap, twist and tuck, then the
# calm start (ripple starts at 0 and calm ends at 1: the longest waves are the gentlest).
def _to_vector(timing: dict) -> np.ndarray:
    return np.array([timing["ripple"][1], *timing["swap"], *timing["twist"], *timing["tuck"],
                     timing["calm"][0]], dtype=np.float64)  # fmt: skip


def _to_timing(x: np.ndarray) -> dict:
    v = [float(a) for a in x]
    return {"ripple": (0.0, v[0]), "swap": (v[1], v[2]), "twist": (v[3], v[4]),
            "tuck": (v[5], v[6]), "calm": (v[7], 1.0)}  # fmt: skip


def _penalised(model: PaceModel, times: np.ndarray, x: np.ndarray) -> float:
    timing = _to_timing(x)
    ra, rb = timing["ripple"]
    ca, _ = timing["calm"]
    if not all(0.0 <= a < b <= 1.0 for a, b in timing.values()):
        return math.inf
    starts = [timing[s][0] for s in STAGE_NAMES]
    ends = [timing[s][1] for s in STAGE_NAMES]
    if np.any(np.diff(starts) < 0) or np.any(np.diff(ends) < 0):
        return math.inf
    if timing_problem(timing) is not None:
        return math.inf
    return float(model.rate(timing, times).max())


def nelder_mead(fun, x0: np.ndarray, scale: float, iterations: int) -> tuple[np.ndarray, float]:
    """Minimise ``fun`` from x0 with the Nelder-Mead simplex (standard coefficients 1, 2,
    0.5, 0.5; Nelder and Mead, "A simplex method for function minimization", 1965).
    Returns (x, fun(x)); infinite values act as walls."""
    n = x0.size
    simplex = [x0.copy()] + [x0 + scale * np.eye(n)[i] for i in range(n)]
    values = [fun(x) for x in simplex]
    for _ in range(iterations):
        order = np.argsort(values, kind="stable")
        simplex = [simplex[i] for i in order]
        values = [values[i] for i in order]
        centre = np.mean(simplex[:-1], axis=0)
        worst = simplex[-1]
        xr = centre + (centre - worst)
        fr = fun(xr)
        if fr < values[0]:
            xe = centre + 2.0 * (centre - worst)
            fe = fun(xe)
            simplex[-1], values[-1] = (xe, fe) if fe < fr else (xr, fr)
        elif fr < values[-2]:
            simplex[-1], values[-1] = xr, fr
        else:
            xc = (
                centre + 0.5 * (worst - centre)
                if fr >= values[-1]
                else centre + 0.5 * (xr - centre)
            )
            fc = fun(xc)
            if fc < min(fr, values[-1]):
                simplex[-1], values[-1] = xc, fc
            else:
                best = simplex[0]
                simplex = [best] + [best + 0.5 * (x - best) for x in simplex[1:]]
                values = [values[0]] + [fun(x) for x in simplex[1:]]
    i = int(np.argmin(values))
    return simplex[i], values[i]


def tune_timing(
    model: PaceModel, start: dict, restarts: int = 3, iterations: int = 1000
) -> tuple[dict, float]:
    """Windows that minimise the model's largest step rate, from ``start`` (which must meet
    :func:`timing_problem`'s constraints), rounded to WINDOW_DIGITS decimals and still
    meeting them. Returns (timing, modelled largest rate per unit time)."""
    grid = model_times()
    x = _to_vector(start)
    fx = _penalised(model, grid, x)
    if not math.isfinite(fx):
        raise ValueError(f"the start windows do not meet the constraints: {timing_problem(start)}")
    scale = 0.05
    for _ in range(restarts):
        x, fx = nelder_mead(lambda v: _penalised(model, grid, v), x, scale, iterations)
        scale *= 0.5
    # round to the published digits: the best of every floor / ceiling combination that
    # still meets the constraints (the optimum sits on them, so plain rounding may not)
    q = 10.0**WINDOW_DIGITS
    lo, hi = np.floor(x * q), np.ceil(x * q)
    best_value, chosen = math.inf, None
    for pick in itertools.product((0, 1), repeat=x.size):
        cand = np.where(np.array(pick) == 1, hi, lo) / q
        value = _penalised(model, grid, cand)
        if value < best_value:
            best_value, chosen = value, cand
    if chosen is None:
        return dict(start), fx
    return _to_timing(chosen), best_value
