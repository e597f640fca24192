"""Check any animated mesh object frame by frame with the core checker.

Works on whatever animates the object (our eversion, hand-made shape keys, modifiers,
an imported cache): each frame is evaluated through the depsgraph and read with
``foreach_get``. The work is a generator (:func:`check_steps`) so the interface can step
it from a modal operator (ESC cancels) while background runs drive it to completion.

Everything that can be refused (object, frame range, topology, report folder) is found
before the scene is touched (the frame range, report names and heat colours come from the
core: ``turnabout.frame_ranges``, ``turnabout.check.report``, ``turnabout.check.heat``);
the results are applied only after the report files exist: per-frame list, timeline
markers at failing frames and at the worst frame, the per-frame metrics as animated custom
properties, a heat colour attribute, and optionally the double curves as a curve object.
"""

from __future__ import annotations

import threading
import time
from dataclasses import dataclass, field

import bpy
import numpy as np
from bpy.props import BoolProperty, IntProperty, StringProperty

from turnabout.frame_ranges import frames_to_check
from turnabout.output import check_output_folder, make_output_folder, resolve_blend_relative

MARKER_FAIL = "turnabout fail"
MARKER_WORST = "turnabout worst"
MARKER_QUADRUPLE = "turnabout four sheets"
_OUR_MARKERS = (MARKER_FAIL, MARKER_WORST, MARKER_QUADRUPLE)
METRIC_PREFIX = "turnabout_"
METRIC_DESCRIPTION = "Turnabout check metric"  # begins each metric property's description
HEAT_ATTRIBUTE = "turnabout_heat"
CURVE_SUFFIX = " double curves"
METRICS_ACTION_SUFFIX = " check metrics"
# the check counts level points with Blender's +Z as up
LEVEL_UP = (0.0, 0.0, 1.0)


class CheckError(ValueError):
    """A check request that cannot be carried out; the message says what was wrong."""


@dataclass
class CheckOutcome:
    """What a finished check produced.

    positions : (F, V, 3) float32 object-space vertex positions per checked frame
    faces : (M, 3) int32 triangles
    frames : (F,) int64 scene frame of each checked frame
    """

    object_name: str
    frames: np.ndarray
    positions: np.ndarray
    faces: np.ndarray
    report: object
    files: list[str] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)


# ----------------------------------------------------------------------------- validation


def validate_object(ob) -> None:
    if ob is None:
        raise CheckError("object: nothing is active; select a mesh object to check")
    if ob.type != "MESH":
        raise CheckError(
            f"object: {ob.name!r} is a {ob.type.lower()}, not a mesh; select a mesh object"
        )


# ----------------------------------------------------------------------------- reading


def _topology(me) -> tuple[int, int, int, np.ndarray]:
    loops = np.empty(len(me.loops), np.int32)
    me.loops.foreach_get("vertex_index", loops)
    return len(me.vertices), len(me.polygons), len(me.loops), loops


def read_frames(context, ob, start: int, end: int):
    """Generator reading every frame's evaluated positions; yields (done, total).

    Returns (via StopIteration.value) ``(positions (F, V, 3) float32, faces (M, 3) int32)``.
    Raises CheckError when the mesh is empty or its topology changes between frames.
    Restores the scene's current frame whatever happens.
    """
    scene = context.scene
    original = scene.frame_current
    total = end - start + 1
    try:
        positions = None
        ref = None
        for i, f in enumerate(range(start, end + 1)):
            scene.frame_set(f)
            dg = context.evaluated_depsgraph_get()
            me = ob.evaluated_get(dg).data
            n = len(me.vertices)
            if ref is None:
                if n == 0 or len(me.polygons) == 0:
                    raise CheckError(
                        f"object: {ob.name!r} has no faces at frame {f}; checking needs a surface"
                    )
                ref = _topology(me)
                me.calc_loop_triangles()
                tri = np.empty(len(me.loop_triangles) * 3, np.int32)
                me.loop_triangles.foreach_get("vertices", tri)
                faces = tri.reshape(-1, 3)
                positions = np.empty((total, n, 3), np.float32)
            else:
                topo = _topology(me)
                if topo[:3] != ref[:3] or not np.array_equal(topo[3], ref[3]):
                    raise CheckError(
                        f"topology: {ob.name!r} changes between frames ({ref[0]} vertices, "
                        f"{ref[1]} faces at frame {start}; {topo[0]} vertices, {topo[1]} faces at "
                        f"frame {f}); checking needs the same mesh connectivity in every frame"
                    )
            me.vertices.foreach_get("co", positions[i].reshape(-1))
            yield i + 1, total
    finally:
        scene.frame_set(original)
    return positions, faces


def bake_frame_times(ob, start: int, end: int):
    """(end - start + 1,) float64 eversion time of each frame from the object's bake settings
    (the "turnabout" JSON property: frame f of a bake shows time (f - frame_start) /
    (frames - 1)); NaN outside the baked frames; None for an object without them."""
    import json

    from .bake import PROP_TAG

    try:
        data = json.loads(ob[PROP_TAG])
        first, count = int(data["frame_start"]), int(data["frames"])
    except (KeyError, TypeError, ValueError):
        return None
    if count < 2:
        return None
    t = (np.arange(start, end + 1) - first) / (count - 1)
    return np.where((t >= 0) & (t <= 1), t, np.nan)


def _run_checker(
    positions, faces, intersections, state, workers=1, times=None, quadruple=False
):
    """Thread body: run the core checker, recording progress and the result in ``state``."""
    from turnabout.check import Thresholds, check_animation
    from turnabout.progress import Cancelled
    from turnabout.views.levels import level_count_table

    def progress(done, total):
        state["done"], state["total"] = done, total
        if state["cancel"].is_set():
            raise Cancelled()

    try:
        state["report"] = check_animation(
            positions,
            faces,
            thresholds=Thresholds(),
            times=times,
            progress=progress,
            intersections=intersections,
            workers=workers,
            quadruple=quadruple and intersections,
            level_counts=level_count_table(LEVEL_UP),
            level_up=LEVEL_UP,
        )
    except BaseException as exc:  # handed back to the generator
        state["error"] = exc


def check_steps(
    context,
    ob,
    start: int,
    end: int,
    folder: str | None,
    intersections: bool = True,
    stem: str | None = None,
    workers: int = 1,
    quadruple: bool = False,
):
    """The whole check as a generator of (stage, done, total); returns a CheckOutcome.

    ``folder`` None writes no report files. Nothing in the scene changes here. ``workers`` > 1
    judges frames in that many forked processes (headless runs only: a forked copy of an
    interactive Blender is not something to rely on).
    """
    from turnabout.check.report import report_paths  # the checker loads on first use

    validate_object(ob)
    if folder is not None:
        check_output_folder(folder, "report folder")
    reader = read_frames(context, ob, start, end)
    while True:
        try:
            done, total = next(reader)
        except StopIteration as stop:
            positions, faces = stop.value
            break
        yield "reading frames", done, total

    state = {"cancel": threading.Event(), "done": 0, "total": 1}
    worker = threading.Thread(
        target=_run_checker,
        args=(positions, faces, intersections, state, workers if bpy.app.background else 1,
              bake_frame_times(ob, start, end), quadruple),  # fmt: skip
        daemon=True,
    )
    worker.start()
    try:
        while worker.is_alive():
            worker.join(0.05)
            yield "checking", state["done"], state["total"]
    finally:
        if worker.is_alive():  # closed early: cancel the checker and wait for it
            state["cancel"].set()
            worker.join()
    if "error" in state:
        raise state["error"]
    report = state["report"]
    outcome = CheckOutcome(ob.name, np.arange(start, end + 1), positions, faces, report)
    if folder is not None:
        json_path, png_path = report_paths(folder, ob.name, bpy.data.filepath, stem)
        try:
            make_output_folder(folder, "report folder")
            report.write_json(json_path)  # both writers are atomic
            outcome.files.append(json_path)
        except OSError as exc:
            raise CheckError(
                f"report: cannot write {json_path!r} ({exc.strerror or exc})"
            ) from None
        try:
            report.write_plot(png_path)
            outcome.files.append(png_path)
        except (ImportError, RuntimeError) as exc:  # RuntimeError: matplotlib is missing
            outcome.warnings.append(f"no PNG report: {exc}")
        except OSError as exc:
            outcome.warnings.append(
                f"no PNG report: cannot write {png_path!r} ({exc.strerror or exc})"
            )
    yield "writing", 1, 1
    return outcome


def run_to_completion(steps, progress=None):
    """Drive a generator from :func:`check_steps`; returns its CheckOutcome."""
    while True:
        try:
            stage, done, total = next(steps)
        except StopIteration as stop:
            return stop.value
        if progress is not None:
            progress(stage, done, total)


# ----------------------------------------------------------------------------- results


def _metrics_action(ob):
    if ob.animation_data is None:
        ob.animation_data_create()
    if ob.animation_data.action is None:
        ob.animation_data.action = bpy.data.actions.new(ob.name + METRICS_ACTION_SUFFIX)
    return ob.animation_data.action


def _numeric_columns(table: dict, n: int) -> dict:
    out = {}
    for name, col in table.items():
        arr = np.asarray(col)
        if (
            arr.shape == (n,)
            and np.issubdtype(arr.dtype, np.number)
            and not np.issubdtype(arr.dtype, np.bool_)
        ):
            out[name] = arr.astype(np.float64)
        elif arr.shape == (n,) and arr.dtype == np.bool_:
            out[name] = arr.astype(np.float64)
    return out


def apply_outcome(context, ob, outcome: CheckOutcome, settings=None, curve_object: bool = False):
    """Show a finished check in the scene (markers, metric curves, heat, list, curves)."""
    from turnabout.check.heat import heat_colours

    from .bake import _set_fcurve

    scene = context.scene
    report = outcome.report
    frames = outcome.frames
    start = int(frames[0])

    # markers: replace ours, keep everyone else's
    for m in [m for m in scene.timeline_markers if m.name in _OUR_MARKERS]:
        scene.timeline_markers.remove(m)
    failing = [int(i) for i in report.failing_frames()]
    for i in failing:
        scene.timeline_markers.new(MARKER_FAIL, frame=start + i)
    worst = report.worst_frame
    if worst is not None:
        scene.timeline_markers.new(MARKER_WORST, frame=start + int(worst))
    quad = getattr(report, "quadruple_points", None)
    for when in [] if quad is None else quad.time:  # the frame nearest each moment
        scene.timeline_markers.new(MARKER_QUADRUPLE, frame=start + int(np.floor(when + 0.5)))

    # per-frame metrics as animated custom properties
    table = _numeric_columns(report.metrics_table(), len(frames))
    action = _metrics_action(ob) if table else None
    cur = int(np.clip(scene.frame_current - start, 0, len(frames) - 1))
    for name, values in table.items():
        prop = METRIC_PREFIX + name
        finite = np.clip(np.nan_to_num(values, nan=0.0, posinf=1e30, neginf=-1e30), -1e30, 1e30)
        ob[prop] = float(finite[cur])
        ob.id_properties_ui(prop).update(description=f"{METRIC_DESCRIPTION} '{name}' per frame")
        _set_fcurve(action, ob, f'["{prop}"]', frames.astype(np.float64), finite)

    # heat of the current frame (or the worst one when the current frame was not checked)
    at = cur if start <= scene.frame_current <= int(frames[-1]) else int(worst or 0)
    heat = np.asarray(report.vertex_heat(at))
    me = ob.data
    if heat.shape == (len(me.vertices),):
        attr = me.color_attributes.get(HEAT_ATTRIBUTE)
        if attr is not None and (attr.domain != "POINT" or attr.data_type != "FLOAT_COLOR"):
            me.color_attributes.remove(attr)
            attr = None
        if attr is None:
            attr = me.color_attributes.new(HEAT_ATTRIBUTE, "FLOAT_COLOR", "POINT")
        attr.data.foreach_set("color", heat_colours(heat).ravel())
        me.color_attributes.active_color = attr
    else:
        outcome.warnings.append(
            "no heat attribute: the evaluated mesh has a different vertex count "
            "from the object's own mesh"
        )

    # the per-frame list
    if settings is not None:
        settings.results.clear()
        for i, fr in enumerate(report.frames):
            row = settings.results.add()
            row.frame = start + i
            row.verdict = str(fr.verdict)
            notes = [f"note: {n}" for n in fr.notes]
            row.reasons = "; ".join([str(r) for r in fr.reasons] + notes)
        noted = len(report.noted_frames())
        settings.last_verdict = str(report.verdict) + (f", {noted} noted frames" if noted else "")

    if curve_object:
        double_curve_object(context, ob, report.double_curves(at))
    return outcome


def double_curve_object(context, ob, polylines):
    """Create or update the curve object showing ``polylines`` (list of (k, 3) arrays)."""
    name = ob.name + CURVE_SUFFIX
    cu = bpy.data.curves.get(name)
    if cu is None:
        cu = bpy.data.curves.new(name, "CURVE")
        cu.dimensions = "3D"
        cu.bevel_depth = 0.004
    cu.splines.clear()
    for line in polylines:
        pts = np.asarray(line, np.float64)
        if len(pts) < 2:
            continue
        sp = cu.splines.new("POLY")
        sp.points.add(len(pts) - 1)
        co = np.concatenate([pts, np.ones((len(pts), 1))], axis=1)
        sp.points.foreach_set("co", co.astype(np.float32).ravel())
    cob = bpy.data.objects.get(name)
    if cob is None:
        cob = bpy.data.objects.new(name, cu)
        context.scene.collection.objects.link(cob)
    cob.matrix_world = ob.matrix_world
    return cob


# ----------------------------------------------------------------------------- operator


class TURNABOUT_OT_check(bpy.types.Operator):
    """Check every frame of the active mesh for pinches, creases, jumps and self-intersections"""

    bl_idname = "turnabout.check"
    bl_label = "Check Animation"
    bl_options = {"REGISTER", "UNDO"}

    first: IntProperty(
        name="First frame", description="First frame (with 'last', overrides the panel)"
    )
    last: IntProperty(name="Last frame", description="Last frame")
    use_range: BoolProperty(name="Use given range", default=False)
    report_dir: StringProperty(
        name="Report folder", description="Overrides the panel's report folder"
    )
    write_reports: BoolProperty(name="Write reports", default=True)

    _timer = None
    _steps = None

    @classmethod
    def poll(cls, context):
        if context.active_object is not None:
            return True
        cls.poll_message_set("select a mesh object to check")
        return False

    def _prepare(self, context):
        s = context.scene.turnabout
        ob = context.active_object
        validate_object(ob)
        if self.use_range:
            chosen = (self.first, self.last)
        else:
            chosen = None if s.check_use_scene_range else (s.check_start, s.check_end)
        start, end = frames_to_check(context.scene.frame_start, context.scene.frame_end, chosen)
        folder = None
        if self.write_reports:
            folder = resolve_blend_relative(
                self.report_dir or s.report_dir, bpy.data.filepath, "report folder"
            )
        return ob, check_steps(context, ob, start, end, folder, s.check_intersections,
                               quadruple=s.check_quadruple_points)  # fmt: skip

    def _finish(self, context, ob, outcome):
        s = context.scene.turnabout
        apply_outcome(context, ob, outcome, s, s.check_curve_object)
        for w in outcome.warnings:
            self.report({"WARNING"}, w)
        failing = len(outcome.report.failing_frames())
        noted = len(outcome.report.noted_frames())
        where = f"; report: {', '.join(outcome.files)}" if outcome.files else ""
        self.report(
            {"INFO"},
            f"{ob.name}: {outcome.report.verdict}, {failing} failing frames, {noted} noted, "
            f"of {len(outcome.frames)}{where}",
        )
        return {"FINISHED"}

    def execute(self, context):
        wm = context.window_manager
        try:
            ob, steps = self._prepare(context)
            wm.progress_begin(0, 100)
            try:
                outcome = run_to_completion(
                    steps, lambda st, d, t: wm.progress_update(int(100 * d / max(t, 1)))
                )
            finally:
                wm.progress_end()
        except (ValueError, OSError) as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        return self._finish(context, ob, outcome)

    def invoke(self, context, event):
        if bpy.app.background:
            return self.execute(context)
        return self._begin_modal(context)

    def _begin_modal(self, context):
        """Validate, then step the check from timer events (the interface's path)."""
        try:
            self._ob_name = context.active_object.name
            _, self._steps = self._prepare(context)
        except (ValueError, OSError) as exc:
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        wm = context.window_manager
        self._timer = wm.event_timer_add(0.05, window=context.window)
        wm.progress_begin(0, 100)
        wm.modal_handler_add(self)
        return {"RUNNING_MODAL"}

    def _stop(self, context):
        wm = context.window_manager
        if self._timer is not None:
            wm.event_timer_remove(self._timer)
            self._timer = None
        wm.progress_end()
        context.workspace.status_text_set(None)

    def modal(self, context, event):
        if event.type == "ESC":
            self._steps.close()  # stops the checker thread and restores the frame
            self._stop(context)
            self.report({"WARNING"}, "check cancelled")
            return {"CANCELLED"}
        if event.type != "TIMER":
            return {"PASS_THROUGH"}
        deadline = time.perf_counter() + 0.04
        try:
            while time.perf_counter() < deadline:
                stage, done, total = next(self._steps)
                context.window_manager.progress_update(int(100 * done / max(total, 1)))
                context.workspace.status_text_set(
                    f"Turnabout: {stage} {done}/{total} (Esc cancels)"
                )
        except StopIteration as stop:
            self._stop(context)
            # by the name the check ended with (the user may have renamed it meanwhile)
            return self._finish(context, bpy.data.objects[stop.value.object_name], stop.value)
        except (ValueError, OSError) as exc:
            self._stop(context)
            self.report({"ERROR"}, str(exc))
            return {"CANCELLED"}
        except ReferenceError:  # the user deleted the object while the check ran
            self._steps.close()
            self._stop(context)
            self.report({"ERROR"}, f"object: {self._ob_name!r} was removed during the check")
            return {"CANCELLED"}
        return {"RUNNING_MODAL"}


CLASSES = (TURNABOUT_OT_check,)
