"""PNG plots of a sweep over (strips, depth): the regular region and the peak curvature.

Each cell is one (strips, depth) pair; when the sweep also varies stage windows, a cell
shows the worst over them (the smallest ratio, the largest curvature). Cells whose ratio is
below the floor are crossed out. Needs matplotlib (the ``plot`` extra), imported here only.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..eversion.regularity import MIN_RATIO
from ..output import atomic_write
from .run import SweepResult


def cell_grid(result: SweepResult) -> tuple[list[int], list[float], np.ndarray, np.ndarray]:
    """(strips, depths, ratio, curvature): the two (len(strips), len(depths)) float64 grids,
    NaN where the sweep has no point."""
    rows = result.rows()
    strips = sorted({r["strips"] for r in rows})
    depths = sorted({r["depth"] for r in rows})
    ratio = np.full((len(strips), len(depths)), np.nan)
    curv = np.full_like(ratio, np.nan)
    for r in rows:
        i, j = strips.index(r["strips"]), depths.index(r["depth"])
        ratio[i, j] = np.fmin(ratio[i, j], r["min_ratio"])  # fmin/fmax skip the NaN
        curv[i, j] = np.fmax(curv[i, j], r["max_curvature"])
    return strips, depths, ratio, curv


def _draw(path: Path, strips, depths, values, fail, title: str, label: str, cmap: str) -> None:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(1.2 + 0.9 * len(depths), 1.2 + 0.5 * len(strips)), dpi=100)
    im = ax.imshow(values, origin="lower", aspect="auto", cmap=cmap)
    for (i, j), v in np.ndenumerate(values):
        if np.isfinite(v):
            ax.text(j, i, f"{v:.3g}", ha="center", va="center", fontsize=7, color="black",
                    bbox={"facecolor": "white", "alpha": 0.6, "lw": 0, "pad": 1})  # fmt: skip
        if fail[i, j]:
            ax.plot([j - 0.45, j + 0.45], [i - 0.45, i + 0.45], color="black", lw=1)
            ax.plot([j - 0.45, j + 0.45], [i + 0.45, i - 0.45], color="black", lw=1)
    ax.set_xticks(range(len(depths)), [f"{d:g}" for d in depths], rotation=45, fontsize=7)
    ax.set_yticks(range(len(strips)), [str(s) for s in strips], fontsize=7)
    ax.set_xlabel("depth (fraction of the radius)")
    ax.set_ylabel("strips")
    ax.set_title(title, fontsize=9)
    fig.colorbar(im, ax=ax, label=label)
    fig.tight_layout()
    meta = {"Software": None}  # no version stamp: the same sweep gives the same bytes
    atomic_write(path, lambda tmp: fig.savefig(tmp, format="png", metadata=meta), ".png")
    plt.close(fig)


def write_plots(result: SweepResult, folder: Path) -> tuple[Path, Path]:
    """Write ``regular.png`` (min ratio, failing cells crossed) and ``curvature.png``."""
    strips, depths, ratio, curv = cell_grid(result)
    fail = np.isfinite(ratio) & (ratio < MIN_RATIO)
    folder = Path(folder)
    p1, p2 = folder / "regular.png", folder / "curvature.png"
    _draw(
        p1,
        strips,
        depths,
        ratio,
        fail,
        f"minimum normalised ratio (crossed: below {MIN_RATIO:g})",
        "ratio",
        "viridis",
    )
    _draw(p2, strips, depths, curv, fail,
          "peak principal curvature x radius", "curvature x R", "magma")  # fmt: skip
    return p1, p2
