"""Run Turnabout's Blender commands inside Blender itself.

    blender -b -P addon/run_headless.py -- scene out.blend --frames 120
    blender -b -P addon/run_headless.py -- render out.blend frames/ --frames 1-120:10
    blender -b -P addon/run_headless.py -- demo

Works from a source checkout (the core is taken from ../core when it is not installed)
and with the bpy module (``python addon/run_headless.py -- demo``).
"""

import importlib.util
import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
CORE = os.path.join(os.path.dirname(HERE), "core")


def _import_addon_package():
    try:
        import turnabout  # noqa: F401
    except ModuleNotFoundError:
        if os.path.isdir(os.path.join(CORE, "turnabout")):
            sys.path.insert(0, CORE)
    name = "turnabout_blender"
    if name not in sys.modules:
        spec = importlib.util.spec_from_file_location(
            name, os.path.join(HERE, "__init__.py"), submodule_search_locations=[HERE]
        )
        module = importlib.util.module_from_spec(spec)
        sys.modules[name] = module
        spec.loader.exec_module(module)
    return importlib.import_module(name + ".commands")


def main() -> int:
    argv = sys.argv[sys.argv.index("--") + 1 :] if "--" in sys.argv else []
    return _import_addon_package().main(argv)


if __name__ == "__main__":
    sys.exit(main())
