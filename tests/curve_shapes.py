"""Closed test curves as (N, 2) float64 point arrays, sampled off the symmetric parameters.

Sampling at t = 2*pi*(k + 1/3)/N keeps sample points off self-crossings and off the
symmetry axes, so the polygons are generic.
"""

from __future__ import annotations

import numpy as np


def params(n: int) -> np.ndarray:
    return 2 * np.pi * (np.arange(n) + 1 / 3) / n


def from_complex(z: np.ndarray) -> np.ndarray:
    return np.stack([z.real, z.imag], axis=1)


def circle(n: int = 400, radius: float = 1.0, ccw: bool = True) -> np.ndarray:
    t = params(n)
    z = radius * np.exp(1j * t)
    return from_complex(z if ccw else z.conj())


def ellipse(n: int = 400, a: float = 2.0, b: float = 0.7, centre=(0.0, 0.0)) -> np.ndarray:
    t = params(n)
    return np.stack([centre[0] + a * np.cos(t), centre[1] + b * np.sin(t)], axis=1)


def wobbly_circle(n: int = 400, amp: float = 0.25, waves: int = 5) -> np.ndarray:
    t = params(n)
    return from_complex((1 + amp * np.cos(waves * t)) * np.exp(1j * t))


def figure_eight(n: int = 400) -> np.ndarray:
    """Lemniscate of Gerono, x = sin t, y = sin t cos t."""
    t = params(n)
    return np.stack([np.sin(t), np.sin(t) * np.cos(t)], axis=1)


def lopsided_figure_eight(n: int = 400) -> np.ndarray:
    """A figure-eight with unequal, skewed lobes (no symmetry)."""
    t = params(n)
    x = np.sin(t) + 0.2 * np.cos(2 * t)
    y = 0.5 * np.sin(2 * t) + 0.25 * np.sin(t) + 0.1 * np.cos(3 * t)
    return np.stack([x, y], axis=1)


def limacon(n: int = 400, b: float = 0.5) -> np.ndarray:
    """Limacon r = b + cos t (an inner loop when 0 < b < 1)."""
    t = params(n)
    return from_complex((b + np.cos(t)) * np.exp(1j * t))


def curl(n: int, k: int, inside: bool = True) -> np.ndarray:
    """A circle with k small loops.

    inside: z = e^{it} + r e^{i(k+1)t} with r (k+1) = 1.6 (loops turning with the circle);
    outside: z = e^{it} + r e^{-i(k-1)t} with r (k-1) = 1.6, k >= 2 (loops turning against it).
    """
    t = params(n)
    if inside:
        m = k + 1
        z = np.exp(1j * t) + (1.6 / m) * np.exp(1j * m * t)
    else:
        j = k - 1
        z = np.exp(1j * t) + (1.6 / j) * np.exp(-1j * j * t)
    return from_complex(z)


def random_fourier_curve(rng: np.random.Generator, n: int = 600, modes: int = 5) -> np.ndarray:
    """A random trigonometric closed curve (generic with probability 1)."""
    t = params(n)
    k = np.arange(1, modes + 1)
    coef = rng.normal(size=(4, modes)) / k
    ang = np.outer(t, k)
    x = np.cos(ang) @ coef[0] + np.sin(ang) @ coef[1]
    y = np.cos(ang) @ coef[2] + np.sin(ang) @ coef[3]
    return np.stack([x, y], axis=1)
