"""A small smooth displacement that breaks the symmetry of a built eversion.

The corrugated eversion is symmetric under rotation by a strip's angle, so its singular
moments come in symmetric sets (eight sheets meet on the axis; quadruple points appear in
copies at one moment). Such a motion is not in general position. Adding

    P'(t) = P(t) + amplitude * sin(pi t) * w(P0)

with w a smooth field of the material coordinates P0 (the starting-sphere positions) that
no rotation or reflection maps to itself, gives a motion in general position near the
original. sin(pi t) vanishes at t = 0 and t = 1, so the start and end spheres stay exact.

The amplitude is ``eps`` times the smallest ratio |edge now| / |edge at the start| over all
frames and edges (the strongest compression the motion applies). w's derivative is at most
KMAX = max |k_i| per unit of material length, so an edge vector changes by at most
amplitude * KMAX * |edge at the start| <= eps * KMAX * |edge now|: with the default
eps = 0.02 every edge of every frame moves by less than 4 % of its own length, far below
what could fold a triangle over or pinch it. :func:`displacement_bound` measures the
largest relative change of an edge vector so a caller can check it, and the frame check
(turnabout.check.check_animation) can be run on the displaced frames.
"""

from __future__ import annotations

import numpy as np

DEFAULT_EPS = 0.02
# wave vectors and phases of w: fixed, with no symmetry among them (arbitrary choices)
_K = np.array([[1.31, -0.47, 0.89], [-0.58, 1.17, 0.71], [0.83, 0.62, -1.29]])
_PHASE = np.array([0.37, 1.91, 2.73])
KMAX = float(np.linalg.norm(_K, axis=1).max())


def symmetry_breaking_field(rest: np.ndarray) -> np.ndarray:
    """w(P0) = (sin(k_i . P0 + phase_i))_i: rest (V, 3) float -> (V, 3) float64."""
    P0 = np.asarray(rest, np.float64)
    return np.sin(P0 @ _K.T + _PHASE)


def strongest_compression(positions: np.ndarray, edges: np.ndarray) -> float:
    """min over frames and edges of |edge| / |edge in frame 0|: positions (F, V, 3) float,
    edges (E, 2) int. Returns a float > 0 for a mesh without collapsed edges."""
    P = np.asarray(positions, np.float64)
    d0 = P[0, edges[:, 1]] - P[0, edges[:, 0]]
    rest = np.sqrt(np.einsum("ei,ei->e", d0, d0))
    worst = np.inf
    for k in range(P.shape[0]):  # one frame at a time: (F, E, 3) may not fit in memory
        d = P[k, edges[:, 1]] - P[k, edges[:, 0]]
        worst = min(worst, float(np.min(np.sqrt(np.einsum("ei,ei->e", d, d)) / rest)))
    return worst


def break_symmetry(
    positions: np.ndarray,
    faces: np.ndarray,
    times: np.ndarray | None = None,
    eps: float = DEFAULT_EPS,
    rest: np.ndarray | None = None,
) -> np.ndarray:
    """The displaced motion, (F, V, 3) float64.

    positions : (F, V, 3) float, frame 0 the starting sphere (material coordinates);
    faces : (M, 3) int; times : (F,) float in [0, 1] (default: evenly spaced from 0 to 1);
    eps : amplitude as a fraction of the strongest compression (0 < eps <= 0.1); every
    edge vector changes by less than eps * KMAX of its length; rest : (V, 3) float the
    starting-sphere positions when frame 0 is not the start (a window of the motion).
    """
    P = np.asarray(positions, np.float64)
    if P.ndim != 3 or P.shape[2] != 3 or P.shape[0] < 2:
        raise ValueError(f"positions must be (frames >= 2, V, 3), got {P.shape}")
    if not (0.0 < eps <= 0.1):
        raise ValueError(f"eps must be in (0, 0.1], got {eps!r}")
    t = np.linspace(0.0, 1.0, P.shape[0]) if times is None else np.asarray(times, float)
    if t.shape != (P.shape[0],) or t.min() < 0 or t.max() > 1:
        raise ValueError("times must be one number in [0, 1] per frame")
    f = np.asarray(faces, np.int64)
    edges = np.unique(
        np.sort(np.concatenate([f[:, [0, 1]], f[:, [1, 2]], f[:, [2, 0]]]), 1), axis=0
    )
    P0 = P[0] if rest is None else np.asarray(rest, np.float64)
    if P0.shape != P.shape[1:]:
        raise ValueError(f"rest must be ({P.shape[1]}, 3), got {P0.shape}")
    amplitude = eps * strongest_compression(np.concatenate([P0[None], P]), edges)
    w = symmetry_breaking_field(P0)
    return P + (amplitude * np.sin(np.pi * t))[:, None, None] * w[None]


def displacement_bound(original: np.ndarray, displaced: np.ndarray, faces: np.ndarray) -> float:
    """Largest |change of an edge vector| / |edge| over all frames and edges (float)."""
    f = np.asarray(faces, np.int64)
    e = np.concatenate([f[:, [0, 1]], f[:, [1, 2]], f[:, [2, 0]]])
    A = np.asarray(original, np.float64)
    B = np.asarray(displaced, np.float64)
    worst = 0.0
    for k in range(A.shape[0]):
        da = A[k, e[:, 1]] - A[k, e[:, 0]]
        db = B[k, e[:, 1]] - B[k, e[:, 0]]
        ratio = np.linalg.norm(db - da, axis=-1) / np.linalg.norm(da, axis=-1)
        worst = max(worst, float(ratio.max()))
    return worst
