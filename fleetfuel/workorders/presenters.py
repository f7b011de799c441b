"""How a task shows on the page: its kind's form fields with values in the site's units, the
caution when it touches the high-pressure side, its measurement verdict and what it still
needs before the work order can close."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from django.forms import BoundField

from fleetfuel.fleet.models import MeasurementLimit

from .context import TaskContext, limit_passed, limit_text
from .fields import TaskField
from .forms import TaskForm
from .kinds import kind_spec
from .models import WorkOrder, WorkOrderTask
from .task_entries import task_form, task_is_high_pressure, task_missing


@dataclass
class FieldView:
    name: str
    label: str
    bound: BoundField  # the input, with its value in the site's units
    required: bool  # needed before the work order can close
    help: str
    unit: str  # typed in: bar(g), psig, mL, ...
    wide: bool
    error: str
    shown: str  # read-only text for a closed work order or an auditor


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
    settled_by: WorkOrder | None = None  # another work order did its due item since

    @property
    def refused(self) -> bool:
        """Some entry as typed is not valid yet (kept, but not what closing would record)."""
        return any(f.error for f in self.fields)


def _field_view(form: TaskForm, f: TaskField, name: str, error: str) -> FieldView:
    return FieldView(
        name=name,
        label=str(f.label),
        bound=form[name],
        required=f.needed,
        help=str(f.help_text),
        unit=f.unit,
        wide=f.wide,
        error=error,
        shown=f.as_text(f.stored(form), form),
    )


def task_view(
    task: WorkOrderTask,
    ctx: TaskContext,
    errors: Mapping[str, str] | None = None,
    *,
    settled_by: WorkOrder | None = None,
) -> TaskView:
    errors = errors or {}
    form = task_form(task, ctx)
    limit = ctx.limit_for(task) if kind_spec(task.kind).chooses == "limit" else None
    value = task.entry.get("value")
    return TaskView(
        task=task,
        fields=[_field_view(form, f, name, errors.get(name, "")) for name, f in form.task_fields()],
        high_pressure=task_is_high_pressure(task),
        limit=limit,
        limit_text=limit_text(limit, ctx.system) if limit else "",
        passed=limit_passed(value if isinstance(value, int | float) else None, limit),
        missing=[] if settled_by else task_missing(task, ctx),
        settled_by=settled_by,
    )
