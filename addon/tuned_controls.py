"""The *Tuned Values* button: fills the panel's controls from the core's documented values.

For the panel's strip count it sets the corrugation depth (and *Default depth*, so the
depth keeps following the strips), the five stage windows and the frame count to what
the core documents for that count: ``default_depth(strips)``, ``Controls(strips=strips)
.timing`` and ``default_frames(strips)`` (``turnabout.eversion.controls``). Nothing else
(start frame, key step, mesh, storage) changes. The values are read from the core each
press, never copied here.
"""

from __future__ import annotations

import bpy

from turnabout.commands.controls_options import PANEL_LABELS
from turnabout.eversion import controls as core

IDNAME = "turnabout.use_tuned_controls"


def tuned_panel_values(strips: int) -> dict:
    """Panel setting name -> value for ``strips``, from the core's documented controls.

    Raises ValueError (the core's ControlError, or ours for a count outside the table)
    naming the *Strips* control and the allowed counts, before the caller touches the panel.
    """
    label = PANEL_LABELS["strips"]
    if not core.MIN_STRIPS <= strips <= core.MAX_STRIPS:
        raise ValueError(
            f"{label}: tuned values exist for {core.MIN_STRIPS} to {core.MAX_STRIPS} strips, "
            f"the panel holds {strips}; set {label} within that range first"
        )
    # looked up on the module at each press, so the button follows the core's table
    timing = core.Controls(strips=strips).timing
    depth = core.default_depth(strips)
    frames = core.default_frames(strips)
    core.Controls(strips=strips, depth=depth, timing=timing)  # refuses what it cannot build
    values = {"auto_depth": True, "depth": float(depth), "frames": int(frames)}
    for stage in core.STAGE_NAMES:
        a, b = timing[stage]
        values[f"{stage}_start"], values[f"{stage}_end"] = float(a), float(b)
    return values


def summary(strips: int, values: dict) -> str:
    """One report line: '12 strips: depth 0.15, 600 frames, ripple 0-0.103, ...'."""
    windows = ", ".join(
        f"{stage} {values[f'{stage}_start']:g}-{values[f'{stage}_end']:g}"
        for stage in core.STAGE_NAMES
    )
    return f"{strips} strips: depth {values['depth']:g}, {values['frames']} frames, {windows}"


class TURNABOUT_OT_use_tuned_controls(bpy.types.Operator):
    """Set depth, stage windows and frames to the tuned values documented for the strip count"""

    bl_idname = IDNAME
    bl_label = "Tuned Values"
    bl_options = {"REGISTER", "UNDO"}

    def execute(self, context):
        s = context.scene.turnabout
        strips = int(s.strips)
        try:
            values = tuned_panel_values(strips)
        except ValueError as exc:  # ControlError too
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        for name, value in values.items():
            setattr(s, name, value)
        self.report({"INFO"}, summary(strips, values))
        return {"FINISHED"}


CLASSES = (TURNABOUT_OT_use_tuned_controls,)
