"""What a mechanic enters on the tablet: one Django form per task kind (its fields, in the
site's units), the work order's own job fields, and a task's "not done" reason.

A task's values are kept as a draft in ``WorkOrderTask.entry`` (SI-style: bar gauge, mL, L/h)
as the mechanic goes; they become service events when the work order closes (close.py). Which
form a task kind uses is said by the registry (kinds.py).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from django import forms

from fleetfuel.accounts.hygiene import number_error, text_error
from fleetfuel.fleet.models import Component
from services import bounds, units

from .context import TaskContext
from .fields import (
    AppearanceField,
    CylinderField,
    FilterField,
    FittedSerialField,
    LimitField,
    MeasuredField,
    NoteField,
    QuantityField,
    TaskField,
    TextField,
)

if TYPE_CHECKING:
    from .models import WorkOrderTask


@dataclass
class TaskDraft:
    """A task's values after a post: valid ones replace the stored ones, an invalid one keeps
    the stored value and is reported in ``errors`` (field name -> message)."""

    entry: dict[str, Any]
    cylinder: int | None
    component_id: int | None
    errors: dict[str, str] = field(default_factory=dict)
    description: str = ""  # the task's title where it follows the cylinder; "" unchanged


COMMON_FIELDS = ("parts_used", "notes")


class TaskForm(forms.Form):
    """The fields of one task kind, then the fields every task has (parts used, notes)."""

    parts_used = TextField(label="Parts used", help_text="Part numbers and quantities.")
    notes = NoteField(label="Notes")

    def __init__(
        self,
        data: Mapping[str, Any] | None = None,
        *,
        task: WorkOrderTask,
        ctx: TaskContext,
        fitted: Component | None = None,
    ) -> None:
        super().__init__(data, auto_id=f"t{task.pk}-%s")
        self.task, self.ctx, self.fitted = task, ctx, fitted
        for name in COMMON_FIELDS:  # the kind's own fields first
            self.fields[name] = self.fields.pop(name)
        for name, f in self.task_fields():
            f.bind(self, name)

    def task_fields(self) -> list[tuple[str, TaskField]]:
        return [(name, f) for name, f in self.fields.items() if isinstance(f, TaskField)]

    def get_initial_for_field(self, field: forms.Field, field_name: str) -> Any:
        """An input's value: what is stored, in the site's units."""
        if isinstance(field, TaskField):
            return field.as_input(field.stored(self), self)
        return super().get_initial_for_field(field, field_name)

    def draft(self) -> TaskDraft:
        """The task's values with what was posted. Only the fields present are touched."""
        task = self.task
        draft = TaskDraft(
            entry=dict(task.entry), cylinder=task.cylinder, component_id=task.component_id
        )
        for name, f in self.task_fields():
            if name not in self.data:
                continue
            if name in self.errors:
                draft.errors[name] = str(self.errors[name][0])
            else:
                f.store(draft, self.cleaned_data[name])
        return draft

    def missing(self) -> list[str]:
        """What must be filled in before the work order can close (plain sentences)."""
        return [
            f"{self.task.description}: fill in “{f.label}”."
            for _, f in self.task_fields()
            if f.missing(self)
        ]


# --------------------------------------------------------------------------- one per kind


class FilterChangeForm(TaskForm):
    filter = FilterField(label="Filter", needed=True)
    part_number = TextField(label="New filter part number", needed=True)
    dp_before_bar = QuantityField(
        label="Differential pressure before",
        quantity="pressure_bar_gauge",
        help_text="Leave blank where the filter has no gauge.",
    )


class FilterCheckForm(TaskForm):
    """A check in seconds before a change: the filter's differential pressure now."""

    filter = FilterField(label="Filter", needed=True)
    dp_bar = QuantityField(
        label="Differential pressure now",
        quantity="pressure_bar_gauge",
        needed=True,
        help_text="From the gauge; with a restriction indicator only, its limit if it shows "
        "red, else 0.",
    )


class SeparatorDrainForm(TaskForm):
    water_ml = QuantityField(
        label="Water drained", quantity="volume_ml", needed=True, help_text="0 if none."
    )
    appearance = AppearanceField(label="What came out", needed=True)


class InjectorReplaceForm(TaskForm):
    cylinder = CylinderField(label="Cylinder", needed=True)
    old_serial = FittedSerialField(label="Old injector serial")
    new_serial = TextField(label="New injector serial", needed=True)
    part_number = TextField(label="Part number")


class ConnectorReplaceForm(TaskForm):
    cylinder = CylinderField(label="Cylinder", needed=True)
    part_number = TextField(label="Part number")


class ReliefValveReplaceForm(TaskForm):
    part_number = TextField(label="Part number")


class MeasurementForm(TaskForm):
    limit = LimitField(label="Measurement", needed=True, key="limit_id")
    value = MeasuredField(
        label="Measured value", quantity="pressure_bar_gauge", minimum=None, needed=True
    )
    cylinder = CylinderField(label="Cylinder (if per cylinder)")

    def __init__(self, data: Mapping[str, Any] | None = None, **kw: Any) -> None:
        super().__init__(data, **kw)
        # The value is typed in the quantity of the limit chosen with it, else the task's.
        raw = str(self.data.get("limit", ""))
        limit = (self.ctx.limits.get(int(raw)) if raw.isdigit() else None) or (
            self.ctx.limit_for(self.task)
        )
        if limit is not None:
            self.fields["value"].quantity = limit.quantity


class InspectionForm(TaskForm):
    findings = NoteField(label="What you found", needed=True)


# --------------------------------------------------------------------------- not done

NOT_DONE_MIN = 10  # characters of a written reason
NOT_DONE_MAX = 500


def not_done_reason_clean(*, raw: str) -> tuple[str, str]:
    """Why a task cannot be done, as one line: ``(reason, "")`` or ``("", what is wrong)``.

    Runs of spaces and line breaks count once, so a reason is at least ten characters of
    words, not of padding.
    """
    reason = " ".join(str(raw).split())
    if problem := text_error(reason, label="The reason", multiline=False):
        return "", problem
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
            value = units.parse_number(raw=str(data.get(name, "")), label=label)
        except ValueError as exc:
            errors[name] = str(exc)
            return None
        if problem := number_error(value, quantity="hours", label=label):
            errors[name] = problem
            return None
        return value

    # The whole notes of the work order, with what closes appended to them.
    notes = str(data["notes"]).strip()[: bounds.NOTES_TOTAL_MAX] if "notes" in data else None
    if notes is not None and (problem := text_error(notes, label="Notes")):
        errors["notes"], notes = problem, None

    entry = JobEntry(
        hour_meter=number("hour_meter", "Hour meter"),
        meter_replaced=str(data.get("meter_replaced", "")).lower() in {"on", "true", "1", "yes"},
        meter_old_final=number("meter_old_final", "Old meter's final reading"),
        meter_new_start=number("meter_new_start", "New meter's reading when fitted"),
        notes=notes,
    )
    entry.errors = errors
    return entry
