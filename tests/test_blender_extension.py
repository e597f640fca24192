"""The built extension zip: validated by Blender's tool, installs, enables, runs, unregisters."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import zipfile

import pytest
from blender_support import REPO, run_python

pytestmark = pytest.mark.blender

import importlib.util  # noqa: E402

_spec = importlib.util.spec_from_file_location("extension_build", os.path.join(REPO, "build.py"))
addon_build = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(addon_build)

INSTALL_AND_RUN = r"""
import json, os, sys
import bpy, addon_utils
zip_path = sys.argv[1]


def op_exists():
    try:
        bpy.ops.turnabout.add_eversion.poll()
        return True
    except AttributeError:  # "could not be found"
        return False


before_types = set(dir(bpy.types))
bpy.ops.extensions.package_install_files(
    filepath=zip_path, repo="user_default", enable_on_install=True
)
name = "bl_ext.user_default.turnabout"
enabled = addon_utils.check(name)[1]
mod = sys.modules[name]
s = bpy.context.scene.turnabout
s.frames, s.mesh_lon, s.mesh_lat = 6, 64, 16
added = bpy.ops.turnabout.add_eversion()
ob = bpy.context.active_object
keys = len(ob.data.shape_keys.key_blocks)
menu_funcs = [f.__module__ for f in bpy.types.VIEW3D_MT_mesh_add._dyn_ui_initialize()]
ours = sorted(t for t in set(dir(bpy.types)) - before_types)
# the bundled core wheel was installed next to the extension
site = os.path.join(os.environ["BLENDER_USER_RESOURCES"], "extensions", ".local", "lib",
                    "python3.11", "site-packages", "turnabout", "__init__.py")
wheel_installed = os.path.isfile(site)  # Blender removes it again on disable
addon_utils.disable(name, default_set=True)
left = sorted(t for t in set(dir(bpy.types)) - before_types)
menu_after = [f.__module__ for f in bpy.types.VIEW3D_MT_mesh_add._dyn_ui_initialize()]
print("RESULT" + json.dumps({
    "enabled": enabled, "package": mod.__package__, "added": sorted(added), "keys": keys,
    "registered": ours, "left": left, "scene_prop_left": hasattr(bpy.types.Scene, "turnabout"),
    "menu": menu_funcs, "menu_after": menu_after, "core_wheel_installed": wheel_installed,
    "ops_left": op_exists(),
}))
"""


@pytest.fixture(scope="module")
def built_zip(tmp_path_factory):
    return addon_build.build(str(tmp_path_factory.mktemp("dist")))


def test_blenders_validator_accepts_the_zip_and_it_bundles_the_core_wheel(built_zip):
    tool = addon_build.find_blender_ext()
    proc = subprocess.run(
        [sys.executable, tool, "validate", built_zip], capture_output=True, text=True
    )
    assert proc.returncode == 0, proc.stdout + proc.stderr
    with zipfile.ZipFile(built_zip) as zf:
        names = zf.namelist()
        manifest = zf.read("blender_manifest.toml").decode()
    wheel = [n for n in names if n.startswith("wheels/") and n.endswith(".whl")]
    assert len(wheel) == 1 and f'"./{wheel[0]}"' in manifest
    assert "__init__.py" in names and "build.py" not in names
    assert not any("__pycache__" in n for n in names)


def test_zip_installs_enables_runs_headless_and_unregisters_cleanly(built_zip, tmp_path):
    proc = run_python(INSTALL_AND_RUN, built_zip, user_dir=tmp_path / "user")
    line = next(ln for ln in proc.stdout.splitlines() if ln.startswith("RESULT"))
    r = json.loads(line[len("RESULT") :])
    assert r["enabled"] and r["package"] == "bl_ext.user_default.turnabout"
    assert r["core_wheel_installed"]
    assert r["added"] == ["FINISHED"] and r["keys"] == 6
    assert any(t.startswith("TURNABOUT_PT_") for t in r["registered"])
    assert {"TURNABOUT_OT_check", "TURNABOUT_OT_rebuild", "TURNABOUT_UL_frames"} <= set(
        r["registered"]
    )
    assert "bl_ext.user_default.turnabout.ui" in r["menu"]
    # after disabling: no class, property, menu entry or operator of ours is left
    assert r["left"] == [] and not r["scene_prop_left"]
    assert "bl_ext.user_default.turnabout.ui" not in r["menu_after"]
    assert not r["ops_left"]


def test_install_option_enables_it_in_a_given_user_folder(built_zip, tmp_path):
    user = tmp_path / "user"
    addon_build.install(built_zip, str(user))
    assert (user / "extensions" / "user_default" / "turnabout" / "blender_manifest.toml").is_file()
