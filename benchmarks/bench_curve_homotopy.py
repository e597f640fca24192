"""Time a 200-frame regular homotopy of 2,000-point closed curves (goal: well under 1 s).

Prints the absolute time and its ratio to a baseline measured in the same run: one
complex exponential and one cumulative sum over the same (200, 2000) block, the least
arithmetic any angle-interpolation homotopy must do.

    python benchmarks/bench_curve_homotopy.py
"""

from __future__ import annotations

import numpy as np
from timing import best_of

from turnabout.curves import marks_per_frame, regular_homotopy

FRAMES, SAMPLES, REPEATS = 200, 2000, 5


def curves():
    t = 2 * np.pi * (np.arange(SAMPLES) + 1 / 3) / SAMPLES
    a = np.stack([np.cos(t), np.sin(t)], axis=1)
    r = 1 + 0.3 * np.cos(5 * t)
    b = np.stack([2 * r * np.cos(t), r * np.sin(t)], axis=1)
    return a, b



def main() -> None:
    a, b = curves()
    theta = np.random.default_rng(0).normal(size=(FRAMES, SAMPLES))
    base = best_of(lambda: np.cumsum(np.exp(1j * theta), axis=1), REPEATS)
    homotopy = best_of(lambda: regular_homotopy(a, b, frames=FRAMES, samples=SAMPLES), REPEATS)
    h = regular_homotopy(a, b, frames=FRAMES, samples=SAMPLES)
    marks = best_of(lambda: marks_per_frame(h.points), REPEATS)
    print(f"baseline exp+cumsum ({FRAMES}x{SAMPLES}): {base * 1e3:8.1f} ms  (1.0)")
    print(f"regular_homotopy incl. checks:      {homotopy * 1e3:8.1f} ms  ({homotopy / base:.1f}x)")
    print(f"marks_per_frame:                    {marks * 1e3:8.1f} ms  ({marks / base:.1f}x)")
    print(f"goal: homotopy well under 1000 ms -> {'met' if homotopy < 1.0 else 'NOT met'}")


if __name__ == "__main__":
    main()
