"""Each sample .blend file's checker verdict matches its name.

A sample passes when no frame fails the checker (warnings and notes do not count); a sample
whose name says "broken" must fail somewhere. Every frame is read back through Blender
(addon/check_objects.py), so frames blended between stored shapes are checked too.
"""

from __future__ import annotations

import os

import pytest
from blender_support import REPO, bpy, needs_5_0_files

pytestmark = [pytest.mark.blender, needs_5_0_files]

FOLDER = os.path.join(REPO, "blend_samples")
SAMPLES = sorted(f for f in os.listdir(FOLDER) if f.endswith(".blend"))
#: Words in a sample's name that say it fails the checker on purpose.
FAILING_WORDS = ("broken", "fails")


def _says_it_fails(name: str) -> bool:
    return any(word in name for word in FAILING_WORDS)


def _failing_frames(path: str) -> tuple[list[int], int]:
    from turnabout_blender import check_objects, headless

    bpy.ops.wm.open_mainfile(filepath=path, load_ui=False)
    headless.ensure_registered()
    scene = bpy.context.scene
    ob = bpy.context.active_object
    steps = check_objects.check_steps(
        bpy.context, ob, scene.frame_start, scene.frame_end, None, intersections=True, workers=2
    )
    outcome = check_objects.run_to_completion(steps)
    frames = [scene.frame_start + int(i) for i in outcome.report.failing_frames()]
    return frames, scene.frame_end - scene.frame_start + 1


def test_samples_are_the_ones_make_samples_writes_and_are_small():
    import importlib.util

    spec = importlib.util.spec_from_file_location(
        "make_samples", os.path.join(FOLDER, "make_samples.py")
    )
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    assert SAMPLES == sorted(mod.SAMPLES)
    sizes = {f: os.path.getsize(os.path.join(FOLDER, f)) for f in SAMPLES}
    assert all(s <= mod.LIMIT_BYTES for s in sizes.values()), sizes
    assert sum(sizes.values()) < 50_000_000
    assert "default_eversion.blend" in SAMPLES and not _says_it_fails("default_eversion.blend")


@pytest.mark.parametrize("name", SAMPLES)
def test_sample_verdict_matches_its_name(name):
    failing, total = _failing_frames(os.path.join(FOLDER, name))
    if _says_it_fails(name):
        assert failing, f"{name} says it fails, but all {total} frames pass"
    else:
        assert failing == [], f"{name}: {len(failing)} of {total} frames fail: {failing[:20]}"
