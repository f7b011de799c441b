"""The registry of work-order task kinds: one entry per kind, everything else reads it.

An entry says the kind's form (its fields on the tablet, forms.py), the service event a close
writes for it (``ServiceEvent.Kind``) and how that event's fields are built from the task's
entry, the fitted part it works on (``ComponentKind``, or None when the task chooses it),
whether it is done per cylinder, whether it opens the high-pressure side (the page then shows
the caution), whether closing it renews the fitted part, the closing rules' name for it
(``services.rules.TASK_KINDS``) and the due-list tasks it does.

To add a kind, see DEVELOPERS.md ("Adding a work-order task kind").
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime
from typing import TYPE_CHECKING, Any

from django.db import models

from fleetfuel.fleet.models import (
    HIGH_PRESSURE_KINDS,
    PER_CYLINDER_KINDS,
    Component,
    ComponentKind,
    FilterPressureReading,
)
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.planning.models import DueItem

from . import forms
from .context import TaskContext, limit_passed

if TYPE_CHECKING:
    from .models import WorkOrderTask


class Kind(models.TextChoices):
    """``WorkOrderTask.Kind``: the stored value and the label of each task kind."""

    FILTER_CHANGE = "filter_change", "Change filter"
    FILTER_CHECK = "filter_check", "Check filter dP before a change"
    SEPARATOR_DRAIN = "separator_drain", "Drain water separator"
    INJECTOR_REPLACE = "injector_replace", "Replace injector"
    CONNECTOR_REPLACE = "connector_replace", "Replace high-pressure connector"
    RELIEF_VALVE_REPLACE = "relief_valve_replace", "Replace rail relief valve"
    MEASUREMENT = "measurement", "Take measurement"
    INSPECTION = "inspection", "Inspect / diagnose"


EventFields = Callable[["WorkOrderTask", TaskContext, Component | None], dict[str, Any]]
# Other records a close writes for a task: (task, its part, when, hour meter at the job).
Records = Callable[["WorkOrderTask", Component | None, datetime, float | None], None]


@dataclass(frozen=True)
class TaskKindSpec:
    kind: Kind
    add_label: str  # in the "add a task" list: what was done
    form: type[forms.TaskForm]
    event_kind: str  # ServiceEvent.Kind written at the close
    event_fields: EventFields  # that event's own fields, from the task's entry
    component_kind: str | None  # the fitted part it works on; None: chosen, or none
    rule_kind: str  # services.rules.TASK_KINDS
    renews_component: bool = False  # closing it fits a new part (serial, part number, hours)
    chooses: str = ""  # "filter" (which fitted filter) or "limit" (which measurement)
    due_tasks: tuple[str, ...] = ()  # DueItem.Task values a task of this kind does
    records: Records | None = None  # other records its close writes (a dP reading)

    @property
    def per_cylinder(self) -> bool:
        """Done on one cylinder (it must name it): its part is fitted per cylinder."""
        return self.component_kind in PER_CYLINDER_KINDS

    @property
    def high_pressure(self) -> bool:
        """Opens the high-pressure side (the page shows the caution): its part is there."""
        return self.component_kind in HIGH_PRESSURE_KINDS

    @property
    def label(self) -> str:
        return str(self.kind.label)

    @property
    def asks(self) -> tuple[str, ...]:
        """What the "add a task" form asks for a task of this kind."""
        asks = ["cylinder"] if self.per_cylinder else []
        if self.chooses:
            asks.append(self.chooses)
        return tuple(asks)


# --------------------------------------------------------------------------- event fields


def _text(task: WorkOrderTask, key: str) -> str:
    return str(task.entry.get(key) or "")


def _part_fields(task: WorkOrderTask, ctx: TaskContext, comp: Component | None) -> dict[str, Any]:
    return {"part_number": _text(task, "part_number")}


def _filter_fields(task: WorkOrderTask, ctx: TaskContext, comp: Component | None) -> dict[str, Any]:
    return {
        "part_number": _text(task, "part_number"),
        "dp_before_bar": task.entry.get("dp_before_bar"),
    }


def _filter_check_fields(
    task: WorkOrderTask, ctx: TaskContext, comp: Component | None
) -> dict[str, Any]:
    return {"measurement_name": "Filter differential pressure", "value": task.entry.get("dp_bar")}


def _filter_check_records(
    task: WorkOrderTask, comp: Component | None, at: datetime, hour_meter: float | None
) -> None:
    """The check's dP reading, which the projection reads: at or over the plan's limit the
    filter is overdue; below it, read once the dirt estimate ran out, it re-bases it."""
    dp = task.entry.get("dp_bar")
    if comp is not None and isinstance(dp, int | float) and hour_meter is not None:
        FilterPressureReading.objects.create(
            component=comp, taken_at=at, hours=hour_meter, dp_bar=float(dp)
        )


def _drain_fields(task: WorkOrderTask, ctx: TaskContext, comp: Component | None) -> dict[str, Any]:
    return {"water_ml": task.entry.get("water_ml"), "water_appearance": _text(task, "appearance")}


def _injector_fields(
    task: WorkOrderTask, ctx: TaskContext, comp: Component | None
) -> dict[str, Any]:
    return {
        "cylinder": task.cylinder,
        "old_serial": _text(task, "old_serial") or (comp.serial if comp else ""),
        "new_serial": _text(task, "new_serial"),
        "part_number": _text(task, "part_number"),
    }


def _connector_fields(
    task: WorkOrderTask, ctx: TaskContext, comp: Component | None
) -> dict[str, Any]:
    return {"cylinder": task.cylinder, "part_number": _text(task, "part_number")}


def _measurement_fields(
    task: WorkOrderTask, ctx: TaskContext, comp: Component | None
) -> dict[str, Any]:
    limit = ctx.limit_for(task)
    value = task.entry.get("value")
    fields = {
        "cylinder": task.cylinder,
        "measurement_name": limit.name if limit else task.description[:80],
        "value": value,
        "low_limit": limit.low if limit else None,
        "high_limit": limit.high if limit else None,
        "passed": limit_passed(value, limit),
    }
    if limit is not None and comp is None:
        fields["component_kind"] = limit.plan.component_kind
    return fields


def _inspection_fields(
    task: WorkOrderTask, ctx: TaskContext, comp: Component | None
) -> dict[str, Any]:
    findings, notes = _text(task, "findings"), _text(task, "notes")
    return {"notes": "\n".join(x for x in (findings, notes) if x)}


# --------------------------------------------------------------------------- the registry

KINDS: dict[Kind, TaskKindSpec] = {
    spec.kind: spec
    for spec in (
        TaskKindSpec(
            kind=Kind.INJECTOR_REPLACE,
            add_label="Injector replaced",
            form=forms.InjectorReplaceForm,
            event_kind=ServiceEvent.Kind.INJECTOR_REPLACED,
            event_fields=_injector_fields,
            component_kind=ComponentKind.INJECTOR,
            rule_kind="injector_replaced",
            renews_component=True,
        ),
        TaskKindSpec(
            kind=Kind.CONNECTOR_REPLACE,
            add_label="High-pressure connector replaced",
            form=forms.ConnectorReplaceForm,
            event_kind=ServiceEvent.Kind.CONNECTOR_REPLACED,
            event_fields=_connector_fields,
            component_kind=ComponentKind.HP_CONNECTOR,
            rule_kind="connector_replaced",
            renews_component=True,
        ),
        TaskKindSpec(
            kind=Kind.RELIEF_VALVE_REPLACE,
            add_label="Rail relief valve replaced",
            form=forms.ReliefValveReplaceForm,
            event_kind=ServiceEvent.Kind.RELIEF_VALVE_REPLACED,
            event_fields=_part_fields,
            component_kind=ComponentKind.RELIEF_VALVE,
            rule_kind="relief_valve_replaced",
            renews_component=True,
        ),
        TaskKindSpec(
            kind=Kind.FILTER_CHANGE,
            add_label="Filter changed",
            form=forms.FilterChangeForm,
            event_kind=ServiceEvent.Kind.FILTER_CHANGED,
            event_fields=_filter_fields,
            component_kind=None,  # the filter changed is chosen
            rule_kind="filter_changed",
            renews_component=True,
            chooses="filter",
            due_tasks=(DueItem.Task.PRIMARY_FILTER, DueItem.Task.FINE_FILTER),
        ),
        TaskKindSpec(
            kind=Kind.FILTER_CHECK,
            add_label="Filter dP checked",
            form=forms.FilterCheckForm,
            event_kind=ServiceEvent.Kind.MEASUREMENT,
            event_fields=_filter_check_fields,
            component_kind=None,  # the filter checked is chosen
            rule_kind="other",  # no follow-up of its own: the reading goes to the projection
            chooses="filter",
            records=_filter_check_records,
        ),
        TaskKindSpec(
            kind=Kind.SEPARATOR_DRAIN,
            add_label="Water separator drained",
            form=forms.SeparatorDrainForm,
            event_kind=ServiceEvent.Kind.SEPARATOR_DRAINED,
            event_fields=_drain_fields,
            component_kind=ComponentKind.PRIMARY_FILTER,  # the separator is in its housing
            rule_kind="separator_drained",
            due_tasks=(DueItem.Task.SEPARATOR_DRAIN,),
        ),
        TaskKindSpec(
            kind=Kind.MEASUREMENT,
            add_label="Measurement",
            form=forms.MeasurementForm,
            event_kind=ServiceEvent.Kind.MEASUREMENT,
            event_fields=_measurement_fields,
            component_kind=None,  # the limit's plan says the part
            rule_kind="measurement",
            chooses="limit",
        ),
        TaskKindSpec(
            kind=Kind.INSPECTION,
            add_label="Inspection / finding",
            form=forms.InspectionForm,
            event_kind=ServiceEvent.Kind.INSPECTION,
            event_fields=_inspection_fields,
            component_kind=None,
            rule_kind="other",
        ),
    )
}

HIGH_PRESSURE_TASK_KINDS = [k for k, spec in KINDS.items() if spec.high_pressure]
# The kinds that do a due item (a filter changed, a separator drained): one done settles it.
ITEM_DOING_KINDS = [k for k, spec in KINDS.items() if spec.due_tasks]


def kind_spec(kind: str) -> TaskKindSpec:
    return KINDS[Kind(kind)]


def kind_for_due_task(due_task: str) -> Kind:
    """The task kind that does a due-list task (a filter change, a drain)."""
    return next(k for k, spec in KINDS.items() if due_task in spec.due_tasks)
