"""A stand-in for Blender's ``UILayout`` that checks every call a panel's ``draw`` makes.

Blender makes real ``UILayout`` objects only while it draws a window; the bpy module runs
in background mode and draws nothing, so a panel's ``draw(context)`` cannot be handed a
real layout in a test. This recorder takes its place and judges each call against
Blender's own description of ``UILayout`` (``bpy.types.UILayout.bl_rna``), the data the
panel draws and the classes that are registered:

* the function exists on ``UILayout``, its keyword names are its parameters, the required
  ones are given and enum arguments (icons, list types, ...) are among the allowed items;
* attributes set on a layout (``enabled``, ``alert``, ...) exist and are writable;
* ``prop``: the property exists on the data; a path property showing ``//`` supports
  blend-relative paths;
* ``operator``: the operator is registered, and properties set on its returned
  properties exist on it;
* ``template_list``: the list class is registered, the collection and the index exist.

Each call is kept in ``calls`` (function name, arguments by name, the layout it was made
on) for assertions.
"""

from __future__ import annotations

import bpy

UI = bpy.types.UILayout.bl_rna
PATH_SUBTYPES = ("FILE_PATH", "DIR_PATH")


class LayoutCallError(AssertionError):
    """A draw call Blender would refuse (or that draws something that does not exist)."""


def _fail(message: str):
    raise LayoutCallError(message)


def operator_rna(idname: str):
    """The registered operator's RNA type; LayoutCallError when ``idname`` is not registered."""
    module, _, name = idname.partition(".")
    if not module or not name:
        _fail(f"operator {idname!r}: an operator name is 'module.name'")
    try:
        return getattr(getattr(bpy.ops, module), name).get_rna_type()
    except KeyError:
        _fail(f"operator {idname!r} is not registered")


def _enum_ids(param) -> set[str]:
    return {item.identifier for item in param.enum_items}


def _check_property(data, name: str, what: str):
    if not hasattr(data, "bl_rna"):
        _fail(f"{what}: {data!r} is not Blender data")
    if name.startswith('["'):
        if name[2:-2] not in data.keys():
            _fail(f"{what}: custom property {name} not on {data!r}")
        return None
    prop = data.bl_rna.properties.get(name)
    if prop is None:
        _fail(f"{what}: {type(data).__name__} has no property {name!r}")
    return prop


class OperatorPropsRecorder:
    """What ``layout.operator`` returns: setting a property checks that the operator has it."""

    def __init__(self, idname: str):
        object.__setattr__(self, "_rna", operator_rna(idname))
        object.__setattr__(self, "_idname", idname)
        object.__setattr__(self, "values", {})

    def __setattr__(self, name, value):
        if self._rna.properties.get(name) is None or name == "rna_type":
            _fail(f"operator {self._idname!r} has no property {name!r}")
        self.values[name] = value


class LayoutRecorder:
    """Records and checks the calls made on it and on the layouts it hands out."""

    def __init__(self, calls: list | None = None, parent: LayoutRecorder | None = None):
        object.__setattr__(self, "calls", [] if calls is None else calls)
        object.__setattr__(self, "attributes", {})
        object.__setattr__(self, "parent", parent)

    def shown_enabled(self) -> bool:
        """Whether this layout and every layout around it are enabled (as last set)."""
        layout = self
        while layout is not None:
            if layout.attributes.get("enabled", True) is False:
                return False
            layout = layout.parent
        return True

    def __setattr__(self, name, value):
        prop = UI.properties.get(name)
        if prop is None or prop.is_readonly:
            _fail(f"UILayout has no writable attribute {name!r}")
        if prop.type == "BOOLEAN" and not isinstance(value, bool):
            _fail(f"UILayout.{name} takes True or False, got {value!r}")
        if prop.type == "ENUM" and value not in _enum_ids(prop):
            _fail(f"UILayout.{name}: {value!r} is not one of {sorted(_enum_ids(prop))}")
        self.attributes[name] = value

    def __getattr__(self, name):
        if name.startswith("__"):
            raise AttributeError(name)
        fn = UI.functions.get(name)
        if fn is None:
            _fail(f"UILayout has no function {name!r}")
        return lambda *args, **kwargs: self._call(name, fn, args, kwargs)

    def _call(self, name, fn, args, kwargs):
        inputs = [p for p in fn.parameters if not p.is_output]
        outputs = [p for p in fn.parameters if p.is_output]
        if len(args) > len(inputs):
            _fail(f"UILayout.{name}: {len(args)} positional arguments, at most {len(inputs)}")
        given = dict(zip((p.identifier for p in inputs), args, strict=False))
        for key, value in kwargs.items():
            if key in given:
                _fail(f"UILayout.{name}: {key!r} given twice")
            given[key] = value
        by_id = {p.identifier: p for p in inputs}
        for key, value in given.items():
            param = by_id.get(key)
            if param is None:
                _fail(f"UILayout.{name} has no parameter {key!r}")
            if param.type == "ENUM" and len(param.enum_items) and not param.is_enum_flag:
                if value not in _enum_ids(param):
                    _fail(f"UILayout.{name}: {key}={value!r} is not an allowed value")
            if param.type == "STRING" and not isinstance(value, str):
                _fail(f"UILayout.{name}: {key} must be a string, got {value!r}")
        for param in inputs:
            if param.is_required and param.identifier not in given:
                _fail(f"UILayout.{name}: the required {param.identifier!r} is missing")
        self.calls.append((name, given, self))

        result = None
        if name in ("prop", "prop_enum", "prop_menu_enum", "props_enum", "prop_tabs_enum"):
            prop = _check_property(given["data"], given["property"], f"UILayout.{name}")
            if name == "prop_enum" and prop is not None:
                if given["value"] not in _enum_ids(prop):
                    _fail(f"UILayout.prop_enum: {given['value']!r} not in {prop.identifier}")
            if prop is not None and prop.type == "STRING" and prop.subtype in PATH_SUBTYPES:
                shown = getattr(given["data"], given["property"])
                if shown.startswith("//") and not getattr(
                    prop, "is_path_supports_blend_relative", True
                ):
                    _fail(
                        f"{prop.identifier}: shows the blend-relative path {shown!r} but the "
                        "property does not support '//' paths"
                    )
        elif name in ("operator", "operator_menu_enum", "operator_enum"):
            result = OperatorPropsRecorder(given["operator"])
        elif name == "template_list":
            if not hasattr(bpy.types, given["listtype_name"]):
                _fail(f"template_list: list type {given['listtype_name']!r} is not registered")
            coll = _check_property(given["dataptr"], given["propname"], "template_list")
            if coll is not None and coll.type != "COLLECTION":
                _fail(f"template_list: {given['propname']!r} is not a collection")
            index = _check_property(
                given["active_dataptr"], given["active_propname"], "template_list"
            )
            if index is not None and index.type != "INT":
                _fail(f"template_list: {given['active_propname']!r} is not an integer")
        elif name in ("menu", "menu_contents"):
            if not hasattr(bpy.types, given["menu"]):
                _fail(f"UILayout.{name}: menu {given['menu']!r} is not registered")
        if outputs and getattr(outputs[0], "fixed_type", None) is not None:
            if outputs[0].fixed_type.identifier == "UILayout":
                result = LayoutRecorder(self.calls, self)
        return result

    # --- for assertions
    def props_drawn(self) -> list[str]:
        return [c[1]["property"] for c in self.calls if c[0] == "prop"]

    def operators_drawn(self) -> list[str]:
        return [c[1]["operator"] for c in self.calls if c[0] == "operator"]

    def labels(self) -> list[str]:
        return [c[1].get("text", "") for c in self.calls if c[0] == "label"]
