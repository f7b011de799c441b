"""How a task shows on the page: its fields with values in the site's units, its cautions,
its measurement verdict and what it still needs before the work order can close."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

from fleetfuel.fleet.models import HIGH_PRESSURE_KINDS, MeasurementLimit
from fleetfuel.ledger.models import ServiceEvent
from services import units

from .forms import HP_TASK_KINDS, TaskContext, fields_for, task_missing
from .models import WorkOrderTask
from .quantities import from_si, input_unit, limit_text, measurement_passed, number_text

Kind = WorkOrderTask.Kind

CAUTION_TITLE = "High-pressure fuel can injure"
CAUTIONS = (
    "Never feel for leaks by hand.",
    "Let rail pressure fall before opening any fitting.",
    "Wear eye protection.",
    "A fuel injection injury is a surgical emergency: get medical help at once, even if the "
    "wound looks small (UK HSE RR976, 2013; HSE safety alert FOD 4-2014: injection injuries "
    "reported from about 7 bar upward).",
    "Follow the manufacturer's service documentation and local rules. This tool shows "
    "cautions; it does not replace training.",
)


@dataclass
class FieldView:
    name: str
    label: str
    widget: str  # text, number, textarea, select
    value: str
    required: bool
    help: str = ""
    unit: str = ""
    step: str = "any"
    options: list[tuple[str, str]] = field(default_factory=list)
    error: str = ""
    shown: str = ""  # read-only text for a closed work order or an auditor


@dataclass
class TaskView:
    task: WorkOrderTask
    fields: list[FieldView]
    high_pressure: bool
    limit: MeasurementLimit | None
    limit_text: str
    passed: bool | None
    missing: list[str]
    not_done_error: str = ""  # why "mark not done" was refused
    not_done_typed: str = ""  # the reason as typed, kept for a retry


def task_is_high_pressure(task: WorkOrderTask) -> bool:
    if task.kind in HP_TASK_KINDS:
        return True
    return task.component is not None and task.component.kind in HIGH_PRESSURE_KINDS


def task_view(
    task: WorkOrderTask, ctx: TaskContext, errors: Mapping[str, str] | None = None
) -> TaskView:
    errors = errors or {}
    rec = task.record
    limit = ctx.limit_for(task) if task.kind == Kind.MEASUREMENT else None
    views: list[FieldView] = []
    for spec in fields_for(task.kind):
        fv = FieldView(
            name=spec.name,
            label=spec.label,
            widget="text",
            value=str(rec.get(spec.name) or ""),
            required=spec.required,
            help=spec.help,
            error=errors.get(spec.name, ""),
        )
        fitted = ctx.component_for(task) if spec.name == "old_serial" else None
        if fitted is not None and "old_serial" not in rec:
            fv.value = fitted.serial  # the fitted injector's serial, as recorded
        match spec.type:
            case "textarea":
                fv.widget = "textarea"
            case "pressure":
                unit = input_unit("pressure_bar_gauge", ctx.system)
                stored = rec.get(spec.name)
                fv.widget, fv.unit, fv.step = "number", unit.label, unit.step
                fv.value = (
                    number_text(from_si(stored, "pressure_bar_gauge", ctx.system))
                    if isinstance(stored, int | float)
                    else ""
                )
                fv.shown = units.display_quantity(
                    value=stored if isinstance(stored, int | float) else None,
                    quantity="pressure_bar_gauge",
                    system=ctx.system,
                )
            case "water":
                stored = rec.get(spec.name)
                fv.widget, fv.unit, fv.step = "number", "mL", "1"
                fv.value = number_text(stored) if isinstance(stored, int | float) else ""
                fv.shown = units.display_quantity(
                    value=stored if isinstance(stored, int | float) else None,
                    quantity="volume_ml",
                    system=ctx.system,
                )
            case "appearance":
                fv.widget = "select"
                fv.options = [("", "Choose…"), *ServiceEvent.Appearance.choices]
                fv.shown = dict(ServiceEvent.Appearance.choices).get(fv.value, "—")
            case "cylinder":
                fv.widget = "select"
                fv.value = str(task.cylinder or "")
                fv.options = [("", "Choose…")] + [
                    (str(n), f"Cylinder {n}") for n in range(1, ctx.cylinders + 1)
                ]
                fv.shown = f"Cylinder {task.cylinder}" if task.cylinder else "—"
            case "filter":
                fv.widget = "select"
                fv.value = str(task.component_id or "")
                fv.options = [("", "Choose…")] + [
                    (str(c.pk), c.get_kind_display()) for c in ctx.filters()
                ]
                fv.shown = task.component.get_kind_display() if task.component else "—"
            case "limit":
                fv.widget = "select"
                fv.value = str(limit.pk) if limit else ""
                fv.options = [("", "Choose…")] + [
                    (str(lim.pk), f"{lim.name} ({limit_text(lim, ctx.system)})")
                    for lim in ctx.limits.values()
                ]
                fv.shown = limit.name if limit else "—"
            case "measured":
                quantity = limit.quantity if limit else "pressure_bar_gauge"
                unit = input_unit(quantity, ctx.system)
                stored = rec.get("value")
                fv.widget, fv.unit, fv.step = "number", unit.label, unit.step
                fv.value = (
                    number_text(from_si(stored, quantity, ctx.system))
                    if isinstance(stored, int | float)
                    else ""
                )
                fv.shown = units.display_quantity(
                    value=stored if isinstance(stored, int | float) else None,
                    quantity=quantity,
                    system=ctx.system,
                )
        if not fv.shown:
            fv.shown = fv.value or "—"
        views.append(fv)
    value = rec.get("value")
    return TaskView(
        task=task,
        fields=views,
        high_pressure=task_is_high_pressure(task),
        limit=limit,
        limit_text=limit_text(limit, ctx.system) if limit else "",
        passed=measurement_passed(value if isinstance(value, int | float) else None, limit),
        missing=task_missing(task, ctx),
    )
