"""Build-up: key moments of the motion and the order in which faces appear."""

from __future__ import annotations

import numpy as np
import pytest

from turnabout.eversion import STAGE_NAMES, Controls, mesh_for
from turnabout.mesh import uniform_sphere_mesh
from turnabout.views import (
    ViewError,
    band_faces,
    key_moments,
    latitude_bands,
    reveal_order,
    reveal_weights,
    surface_parts,
)

CTL = Controls()
N = CTL.strips
REVEALS = np.linspace(0.0, 1.0, 101)


@pytest.fixture(scope="module")
def mesh():
    return mesh_for(CTL)


def test_key_moments_are_the_middle_and_end_of_every_stage():
    timing = {**Controls().timing, "twist": (0.3, 0.6)}
    moments = key_moments(Controls(timing=timing))
    names = [n for n, _ in moments]
    assert sorted(names) == sorted(f"{s} {w}" for s in STAGE_NAMES for w in ("middle", "end"))
    times = dict(moments)
    for stage, (a, b) in timing.items():
        assert times[f"{stage} middle"] == pytest.approx((a + b) / 2)
        assert times[f"{stage} end"] == b
    assert [t for _, t in moments] == sorted(t for _, t in moments)
    assert times["calm end"] == 1.0


def _weights(order, softness=0.05):
    return np.stack([reveal_weights(order, float(r), softness) for r in REVEALS])


@pytest.mark.parametrize("by, count", [("band", None), ("band", 7), ("part", None)])
def test_weights_grow_monotonically_from_nothing_to_everything(mesh, by, count):
    order = reveal_order(mesh, N, by=by, count=count)
    assert order.shape == (mesh.triangles().shape[0],)
    assert order.min() >= 0.0 and order.max() <= 1.0
    w = _weights(order)
    assert np.all(w[0] == 0.0) and np.all(w[-1] == 1.0)
    assert np.all(np.diff(w, axis=0) >= 0.0)
    assert w.min() >= 0.0 and w.max() <= 1.0
    # smooth in the reveal: a face's weight moves by at most the quintic step's steepest
    # slope (15/8) times the step in reveal over the softness
    step = (REVEALS[1] - REVEALS[0]) * 1.05 / 0.05
    assert np.diff(w, axis=0).max() <= 15 / 8 * step + 1e-12


def test_band_order_runs_from_the_south_pole_northwards(mesh):
    order = reveal_order(mesh, N, by="band")
    parts = surface_parts(mesh, N)
    assert order[parts.cap("south")].max() < order[parts.guide()].min()
    assert order[parts.guide()].max() < order[parts.cap("north")].min()
    # with bands, every face inside latitude band j appears at j / count
    bands = latitude_bands(7)
    stepped = reveal_order(mesh, N, by="band", count=7)
    for j in range(7):
        inside = band_faces(mesh, bands, j)
        assert np.all(stepped[inside] == j / 7)


def test_part_order_reveals_whole_parts_caps_then_guides_then_waves(mesh):
    order = reveal_order(mesh, N, by="part")
    p = surface_parts(mesh, N)
    masks = [p.cap()] + [p.guide(k) for k in range(N)] + [p.wave(k) for k in range(N)]
    firsts = [order[m].min() for m in masks]
    assert all(order[m].max() == order[m].min() for m in masks)  # one value per part
    assert firsts == sorted(firsts) and len(set(firsts)) == len(masks)
    w = _weights(order)
    for m in masks:  # at every reveal, a part is all at one weight
        assert np.all(w[:, m].max(axis=1) == w[:, m].min(axis=1))
    # halfway, the caps and some guide strips are out; no wave strip has started
    mid = reveal_weights(order, 0.45)
    assert np.all(mid[p.cap()] == 1.0) and np.all(mid[p.wave()] == 0.0)


@pytest.mark.parametrize(
    "call, option, allowed",
    [
        (lambda m: reveal_order(m, 8, by="spiral"), "by", "'band' or 'part'"),
        (lambda m: reveal_order(m, 8, by="band", count=0), "count", "from 1 to 90"),
        (lambda m: reveal_order(m, 70), "strips", "from 8 to 16"),
        (lambda m: reveal_weights(np.zeros(3), 1.5), "reveal", "from 0 to 1"),
        (lambda m: reveal_weights(np.zeros(3), 0.5, softness=0.0), "softness", "(0, 1]"),
    ],
)
def test_bad_reveal_options_are_refused_with_the_allowed_range(call, option, allowed):
    with pytest.raises(ViewError) as exc:
        call(uniform_sphere_mesh(8 * 16, 31))
    assert exc.value.option == option and allowed in str(exc.value)
