"""What a mechanic records on each task, and how a posted form is read back into a draft.

Values are stored SI-style in ``WorkOrderTask.record`` (bar gauge, mL, L/h) and typed in the
site's unit system (quantities.py). Each task kind has a short list of fields
(``TASK_FIELDS``); presenters.py builds the page from the same list.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from fleetfuel.fleet.models import Component, ComponentKind, MeasurementLimit
from fleetfuel.ledger.models import ServiceEvent

from .models import WorkOrderTask
from .quantities import parse_number, to_si

Kind = WorkOrderTask.Kind

# Task kinds that open the high-pressure side: cautions are shown on every one of them.
HP_TASK_KINDS = frozenset(
    {Kind.INJECTOR_REPLACE, Kind.CONNECTOR_REPLACE, Kind.RELIEF_VALVE_REPLACE}
)
PER_CYLINDER_TASKS = frozenset({Kind.INJECTOR_REPLACE, Kind.CONNECTOR_REPLACE})

# What each task kind becomes in the closing rules (services.rules.TASK_KINDS) and the ledger.
RULE_KIND = {
    Kind.FILTER_CHANGE: "filter_changed",
    Kind.SEPARATOR_DRAIN: "separator_drained",
    Kind.INJECTOR_REPLACE: "injector_replaced",
    Kind.CONNECTOR_REPLACE: "connector_replaced",
    Kind.RELIEF_VALVE_REPLACE: "relief_valve_replaced",
    Kind.MEASUREMENT: "measurement",
    Kind.INSPECTION: "other",
}
EVENT_KIND = {
    Kind.FILTER_CHANGE: ServiceEvent.Kind.FILTER_CHANGED,
    Kind.SEPARATOR_DRAIN: ServiceEvent.Kind.SEPARATOR_DRAINED,
    Kind.INJECTOR_REPLACE: ServiceEvent.Kind.INJECTOR_REPLACED,
    Kind.CONNECTOR_REPLACE: ServiceEvent.Kind.CONNECTOR_REPLACED,
    Kind.RELIEF_VALVE_REPLACE: ServiceEvent.Kind.RELIEF_VALVE_REPLACED,
    Kind.MEASUREMENT: ServiceEvent.Kind.MEASUREMENT,
    Kind.INSPECTION: ServiceEvent.Kind.INSPECTION,
}
# The fitted component a task works on (per-cylinder kinds look up the cylinder).
TASK_COMPONENT_KIND = {
    Kind.SEPARATOR_DRAIN: ComponentKind.PRIMARY_FILTER,
    Kind.INJECTOR_REPLACE: ComponentKind.INJECTOR,
    Kind.CONNECTOR_REPLACE: ComponentKind.HP_CONNECTOR,
    Kind.RELIEF_VALVE_REPLACE: ComponentKind.RELIEF_VALVE,
}
FILTER_CHOICES = (ComponentKind.PRIMARY_FILTER, ComponentKind.FINE_FILTER)

MAX_TEXT = 60  # part numbers and serials (the ledger's column width)
MAX_NOTE = 2000


# --------------------------------------------------------------------------- field specs


@dataclass(frozen=True)
class FieldSpec:
    name: str
    label: str
    type: str  # text, number, pressure, textarea, cylinder, appearance, limit, filter
    required: bool = False
    help: str = ""


COMMON_FIELDS = (
    FieldSpec("parts_used", "Parts used", "text", help="Part numbers and quantities."),
    FieldSpec("notes", "Notes", "textarea"),
)
TASK_FIELDS: dict[str, tuple[FieldSpec, ...]] = {
    Kind.FILTER_CHANGE: (
        FieldSpec("filter", "Filter", "filter", required=True),
        FieldSpec("part_number", "New filter part number", "text", required=True),
        FieldSpec(
            "dp_before_bar",
            "Differential pressure before",
            "pressure",
            help="Leave blank where the filter has no gauge.",
        ),
    ),
    Kind.SEPARATOR_DRAIN: (
        FieldSpec("water_ml", "Water drained", "water", required=True, help="0 if none."),
        FieldSpec("appearance", "What came out", "appearance", required=True),
    ),
    Kind.INJECTOR_REPLACE: (
        FieldSpec("cylinder", "Cylinder", "cylinder", required=True),
        FieldSpec("old_serial", "Old injector serial", "text"),
        FieldSpec("new_serial", "New injector serial", "text", required=True),
        FieldSpec("part_number", "Part number", "text"),
    ),
    Kind.CONNECTOR_REPLACE: (
        FieldSpec("cylinder", "Cylinder", "cylinder", required=True),
        FieldSpec("part_number", "Part number", "text"),
    ),
    Kind.RELIEF_VALVE_REPLACE: (FieldSpec("part_number", "Part number", "text"),),
    Kind.MEASUREMENT: (
        FieldSpec("limit", "Measurement", "limit", required=True),
        FieldSpec("value", "Measured value", "measured", required=True),
        FieldSpec("cylinder", "Cylinder (if per cylinder)", "cylinder"),
    ),
    Kind.INSPECTION: (FieldSpec("findings", "What you found", "textarea", required=True),),
}


def fields_for(kind: str) -> tuple[FieldSpec, ...]:
    return TASK_FIELDS.get(kind, ()) + COMMON_FIELDS


# --------------------------------------------------------------------------- context


@dataclass
class TaskContext:
    """What the task forms need to know about the unit (loaded once per page)."""

    system: str
    cylinders: int
    limits: dict[int, MeasurementLimit]
    components: list[Component]

    def component(self, kind: str, position: int | None = None) -> Component | None:
        for c in self.components:
            if c.kind == kind and (position is None or c.position == position):
                return c
        return None

    def component_for(self, task: WorkOrderTask) -> Component | None:
        """The fitted part a task works on: the one linked, or the one at its cylinder."""
        if task.component is not None:
            return task.component
        kind = TASK_COMPONENT_KIND.get(task.kind)
        if kind is None or (task.kind in PER_CYLINDER_TASKS and task.cylinder is None):
            return None
        return self.component(kind, task.cylinder if task.kind in PER_CYLINDER_TASKS else None)

    def filters(self) -> list[Component]:
        return [c for c in self.components if c.kind in FILTER_CHOICES]

    def limit_for(self, task: WorkOrderTask) -> MeasurementLimit | None:
        limit_id = task.record.get("limit_id")
        if isinstance(limit_id, int) and limit_id in self.limits:
            return self.limits[limit_id]
        # A planned measurement task names its limit in the description.
        wanted = task.description.strip().lower()
        return next((lim for lim in self.limits.values() if lim.name.lower() == wanted), None)


# --------------------------------------------------------------------------- reading a draft


@dataclass
class TaskEntry:
    record: dict[str, Any]
    cylinder: int | None
    component_id: int | None
    errors: dict[str, str] = field(default_factory=dict)


def _text(data: Mapping[str, Any], name: str, limit: int = MAX_TEXT) -> str:
    return str(data.get(name, "")).strip()[:limit]


def task_entry_clean(task: WorkOrderTask, data: Mapping[str, Any], ctx: TaskContext) -> TaskEntry:
    """Read a task form. Valid values replace the draft; an invalid one keeps the old value
    and is reported. Only the fields present in ``data`` are touched."""
    record: dict[str, Any] = dict(task.record)
    cylinder = task.cylinder
    component_id = task.component_id
    errors: dict[str, str] = {}
    for spec in fields_for(task.kind):
        if spec.name not in data:
            continue
        raw = str(data.get(spec.name, ""))
        try:
            match spec.type:
                case "text":
                    record[spec.name] = _text(data, spec.name)
                case "textarea":
                    record[spec.name] = _text(data, spec.name, MAX_NOTE)
                case "pressure":
                    value = parse_number(raw, label=spec.label)
                    record[spec.name] = (
                        None if value is None else to_si(value, "pressure_bar_gauge", ctx.system)
                    )
                case "water":
                    record[spec.name] = parse_number(raw, label=spec.label)
                case "appearance":
                    if raw and raw not in ServiceEvent.Appearance.values:
                        raise ValueError(f"{spec.label}: choose one of the listed appearances.")
                    record[spec.name] = raw
                case "cylinder":
                    value = parse_number(raw, label=spec.label, minimum=None)
                    if value is not None and (
                        value != int(value) or not 1 <= value <= ctx.cylinders
                    ):
                        raise ValueError(
                            f"Cylinder {raw.strip()} does not exist on this engine "
                            f"(cylinders 1 to {ctx.cylinders})."
                        )
                    cylinder = int(value) if value is not None else None
                    comp_kind = TASK_COMPONENT_KIND.get(task.kind)
                    if comp_kind and task.kind in PER_CYLINDER_TASKS:
                        comp = ctx.component(comp_kind, cylinder) if cylinder else None
                        component_id = comp.pk if comp else None
                case "filter":
                    chosen = next((c for c in ctx.filters() if str(c.pk) == raw), None)
                    if raw and chosen is None:
                        raise ValueError("Filter: choose one of the fitted filters.")
                    component_id = chosen.pk if chosen else None
                case "limit":
                    chosen_limit = ctx.limits.get(int(raw)) if raw.isdigit() else None
                    if raw and chosen_limit is None:
                        raise ValueError("Measurement: choose one of the plan's measurements.")
                    record["limit_id"] = chosen_limit.pk if chosen_limit else None
                case "measured":
                    limit = ctx.limits.get(record.get("limit_id") or -1) or ctx.limit_for(task)
                    quantity = limit.quantity if limit else "pressure_bar_gauge"
                    value = parse_number(raw, label=spec.label, minimum=None)
                    record["value"] = None if value is None else to_si(value, quantity, ctx.system)
                    record["quantity"] = quantity
        except ValueError as exc:
            errors[spec.name] = str(exc)
    return TaskEntry(record=record, cylinder=cylinder, component_id=component_id, errors=errors)


def task_missing(task: WorkOrderTask, ctx: TaskContext) -> list[str]:
    """What a task still needs before the work order can close (plain sentences). A task
    marked not done needs nothing."""
    if task.is_not_done:
        return []
    missing: list[str] = []
    rec = task.record
    for spec in TASK_FIELDS.get(task.kind, ()):
        if not spec.required:
            continue
        match spec.type:
            case "cylinder":
                # The closing rules name a missing cylinder themselves.
                continue
            case "filter":
                ok = task.component_id is not None
            case "limit":
                ok = ctx.limit_for(task) is not None
            case "measured":
                ok = rec.get("value") is not None
            case "water":
                ok = rec.get("water_ml") is not None
            case _:
                ok = bool(str(rec.get(spec.name) or "").strip())
        if not ok:
            missing.append(f"{task.description}: fill in “{spec.label}”.")
    return missing


# --------------------------------------------------------------------------- not done

NOT_DONE_MIN = 10  # characters of a written reason
NOT_DONE_MAX = 500


def not_done_reason_clean(*, raw: str) -> tuple[str, str]:
    """Why a task cannot be done, as one line: ``(reason, "")`` or ``("", what is wrong)``.

    Runs of spaces and line breaks count once, so a reason is at least ten characters of
    words, not of padding.
    """
    reason = " ".join(str(raw).split())
    if len(reason) >= NOT_DONE_MIN:
        return reason[:NOT_DONE_MAX], ""
    example = "e.g. “Filter not in stock, ordered for Tuesday”"
    if not reason:
        return (
            "",
            f"Write why this task cannot be done ({NOT_DONE_MIN} characters or more), {example}.",
        )
    return "", (
        f"Say a little more about why this task cannot be done: {NOT_DONE_MIN} characters or "
        f"more (you wrote {len(reason)}), {example}."
    )


# --------------------------------------------------------------------------- job fields


@dataclass
class JobEntry:
    """The work order's own fields on the tablet: hour meter, meter replacement, notes."""

    hour_meter: float | None
    meter_replaced: bool
    meter_old_final: float | None
    meter_new_start: float | None
    notes: str | None
    errors: dict[str, str] = field(default_factory=dict)


def job_entry_clean(data: Mapping[str, Any]) -> JobEntry:
    errors: dict[str, str] = {}

    def number(name: str, label: str) -> float | None:
        try:
            return parse_number(str(data.get(name, "")), label=label)
        except ValueError as exc:
            errors[name] = str(exc)
            return None

    entry = JobEntry(
        hour_meter=number("hour_meter", "Hour meter"),
        meter_replaced=str(data.get("meter_replaced", "")).lower() in {"on", "true", "1", "yes"},
        meter_old_final=number("meter_old_final", "Old meter's final reading"),
        meter_new_start=number("meter_new_start", "New meter's reading when fitted"),
        notes=str(data["notes"]).strip()[: MAX_NOTE * 4] if "notes" in data else None,
    )
    entry.errors = errors
    return entry


ADD_KINDS = [
    (Kind.INJECTOR_REPLACE, "Injector replaced"),
    (Kind.CONNECTOR_REPLACE, "High-pressure connector replaced"),
    (Kind.RELIEF_VALVE_REPLACE, "Rail relief valve replaced"),
    (Kind.FILTER_CHANGE, "Filter changed"),
    (Kind.SEPARATOR_DRAIN, "Water separator drained"),
    (Kind.MEASUREMENT, "Measurement"),
    (Kind.INSPECTION, "Inspection / finding"),
]


@dataclass
class NewTask:
    kind: str
    cylinder: int | None
    component_id: int | None
    limit_id: int | None
    description: str


def new_task_clean(data: Mapping[str, Any], ctx: TaskContext) -> tuple[NewTask | None, str]:
    """Read the 'add a task' form: (task, '') or (None, what is wrong)."""
    kind = str(data.get("kind", ""))
    if kind not in dict(ADD_KINDS):
        return None, "Choose what kind of task to add."
    cylinder: int | None = None
    raw_cyl = str(data.get("cylinder", "")).strip()
    if kind in PER_CYLINDER_TASKS:
        if not raw_cyl.isdigit() or not 1 <= int(raw_cyl) <= ctx.cylinders:
            return None, f"Say which cylinder (1 to {ctx.cylinders})."
        cylinder = int(raw_cyl)
    component_id: int | None = None
    comp_kind = TASK_COMPONENT_KIND.get(kind)
    if comp_kind:
        comp = ctx.component(comp_kind, cylinder)
        component_id = comp.pk if comp else None
    if kind == Kind.FILTER_CHANGE:
        raw = str(data.get("filter", ""))
        chosen = next((c for c in ctx.filters() if str(c.pk) == raw), None)
        if chosen is None:
            return None, "Choose which filter was changed."
        component_id = chosen.pk
    limit_id: int | None = None
    if kind == Kind.MEASUREMENT:
        raw = str(data.get("limit", ""))
        limit = ctx.limits.get(int(raw)) if raw.isdigit() else None
        if limit is None:
            return None, "Choose which measurement."
        limit_id = limit.pk
    label = dict(ADD_KINDS)[kind]
    description = str(data.get("description", "")).strip()[:120]
    if not description:
        if cylinder is not None:
            description = f"{label}, cylinder {cylinder}"
        elif limit_id is not None:
            description = ctx.limits[limit_id].name
        elif kind == Kind.FILTER_CHANGE and component_id:
            comp = next(c for c in ctx.filters() if c.pk == component_id)
            description = f"{label}: {comp.get_kind_display()}"
        else:
            description = label
    return NewTask(kind, cylinder, component_id, limit_id, description[:200]), ""
