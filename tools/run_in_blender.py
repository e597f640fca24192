"""Run Turnabout's Blender commands inside Blender itself.

    blender -b -P tools/run_in_blender.py -- scene out.blend --frames 120
    blender -b -P tools/run_in_blender.py -- render out.blend frames/ --frames 1-120:10
    blender -b -P tools/run_in_blender.py -- demo

Works from a source checkout (the core is taken from core/ and the add-on from addon/ when they are not installed)
and with the bpy module (``python tools/run_in_blender.py -- demo``).
"""

import importlib.util
import os
import sys

REPO = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
CORE = os.path.join(REPO, "core")
ADDON = os.path.join(REPO, "addon")


def _import_addon_package():
    try:
        import turnabout  # noqa: F401
    except ModuleNotFoundError:
        if os.path.isdir(os.path.join(CORE, "turnabout")):
            sys.path.insert(0, CORE)
    name = "turnabout_blender"
    if name not in sys.modules:
        spec = importlib.util.spec_from_file_location(
            name, os.path.join(ADDON, "__init__.py"), submodule_search_locations=[ADDON]
        )
        module = importlib.util.module_from_spec(spec)
        sys.modules[name] = module
        spec.loader.exec_module(module)
    return importlib.import_module(name + ".blender_commands")


def main() -> int:
    argv = sys.argv[sys.argv.index("--") + 1 :] if "--" in sys.argv else []
    return _import_addon_package().main(argv)


if __name__ == "__main__":
    sys.exit(main())
