"""Progress reporting shared by the command line and long core computations.

Core functions take an optional ``progress`` callable ``progress(done, total)``
that may raise :class:`Cancelled` to stop the work; the CLI passes a tqdm bar,
the add-on passes Blender's progress API.
"""

from __future__ import annotations

import sys
from collections.abc import Callable

ProgressFn = Callable[[int, int], None]


class Cancelled(Exception):
    """Raised by a progress callback to stop long work cleanly."""


def no_progress(done: int, total: int) -> None:  # noqa: ARG001
    return None


class ProgressBar:
    """A command-line progress bar (tqdm when installed, a plain line otherwise)."""

    def __init__(self, description: str, total: int, enabled: bool = True):
        self.total = total
        self.enabled = enabled
        self._description = description
        self._bar = None
        self._started = False
        self._last = -1

    def _start(self) -> None:
        # shown from its first step, so a bar for a later stage waits for its turn
        self._started = True
        try:
            from tqdm import tqdm

            self._bar = tqdm(total=self.total, desc=self._description, unit="step",
                             file=sys.stderr)  # fmt: skip
        except ImportError:
            pass

    def __call__(self, done: int, total: int) -> None:
        if not self.enabled:
            return
        if not self._started:
            self._start()
        if self._bar is not None:
            if total != self._bar.total:
                self._bar.total = total
            self._bar.update(done - self._bar.n)
        else:
            pct = int(100 * done / max(total, 1))
            if pct != self._last:
                self._last = pct
                print(f"\r{self._description}: {pct:3d}%", end="", file=sys.stderr)

    def close(self) -> None:
        if self._bar is not None:
            self._bar.close()
        elif self.enabled and self._last >= 0:
            print(file=sys.stderr)

    def __enter__(self) -> ProgressBar:
        return self

    def __exit__(self, *exc) -> None:
        self.close()
