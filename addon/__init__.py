"""Turnabout for Blender: build, bake and check sphere eversions.

A thin layer over the Blender-free core (the ``turnabout`` package): it moves arrays
between Blender and the core, draws panels and reports. Importing this package does
not import Blender; ``register()`` does, so the command line can reach
``turnabout_blender.blender_commands`` without the bpy module.
"""

from __future__ import annotations

import importlib

# Modules that define Blender classes, in registration order (property groups first).
_CLASS_MODULES = (
    "props",
    "bake",
    "tuned_controls",
    "look",
    "check_objects",
    "clear_check",
    "export",
    "ui",
    "curves_panel",
    "views_panel",
)


def _modules():
    return [importlib.import_module(f".{name}", __package__) for name in _CLASS_MODULES]


def _classes():
    out = []
    for mod in _modules():
        out.extend(getattr(mod, "CLASSES", ()))
    return tuple(out)


def register() -> None:
    import bpy

    for cls in _classes():
        bpy.utils.register_class(cls)
    for mod in _modules():
        hook = getattr(mod, "register", None)
        if hook is not None:
            hook()


def unregister() -> None:
    import bpy

    for mod in reversed(_modules()):
        hook = getattr(mod, "unregister", None)
        if hook is not None:
            hook()
    for cls in reversed(_classes()):
        bpy.utils.unregister_class(cls)
