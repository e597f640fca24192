"""Fixtures shared by the command-line tests (tests/test_cli_*.py).

A test module that defines a fixture of the same name uses its own.
"""

from __future__ import annotations

import numpy as np
import pytest
from surfaces import round_sphere

from turnabout.meshfiles.npz import write_npz


@pytest.fixture
def no_scan(monkeypatch):
    """Fail the test if any regularity scan starts (a refusal must come before the work)."""
    from turnabout.eversion import regularity

    def boom(*a, **k):
        raise AssertionError("a regularity scan ran before the refusal")

    monkeypatch.setattr(regularity, "scan", boom)
    monkeypatch.setattr(regularity, "_checked", {})


@pytest.fixture
def curves(tmp_path):
    """a: circle, b: ellipse (turning number 1 both), s: limacon with a loop (2), as .npy."""
    from curve_shapes import circle, ellipse, limacon

    out = {}
    for name, pts in (("a", circle(400)), ("b", ellipse(400)), ("s", limacon(400))):
        out[name] = str(tmp_path / f"{name}.npy")
        np.save(out[name], pts)
    return out


@pytest.fixture
def breathing(tmp_path):
    """A sphere that breathes by 10 %: 8 frames that pass every check."""
    p0, faces = round_sphere(10)
    scale = 1.0 + 0.1 * np.sin(np.linspace(0, np.pi, 8))
    return write_npz(tmp_path / "breathe.npz", p0[None] * scale[:, None, None], faces)


@pytest.fixture
def pushed(tmp_path):
    """A sphere pushed flat and through itself: frames with a fold, which fail."""
    p0, faces = round_sphere(10)
    pos = np.stack([p0 * np.array([1.0, 1.0, s]) for s in np.linspace(1, -1, 11)])
    return write_npz(tmp_path / "push.npz", pos, faces)
