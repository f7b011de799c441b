"""A task through its kind's registry entry (kinds.py): the part it works on, its form, the
draft read from a post, what it still needs, how the closing rules see it, the fields of the
service event it becomes, and a task added on the page."""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

from fleetfuel.accounts.hygiene import text_error
from fleetfuel.fleet.models import Component
from services import rules

from .context import TaskContext, limit_label
from .forms import TaskDraft, TaskForm
from .kinds import KINDS, kind_spec
from .models import WorkOrderTask


def task_component(task: WorkOrderTask, ctx: TaskContext) -> Component | None:
    """The fitted part a task works on: the one linked, or the kind's part (at the task's
    cylinder for a per-cylinder kind)."""
    if task.component is not None:
        return task.component
    spec = kind_spec(task.kind)
    if spec.component_kind is None:
        return None
    if spec.per_cylinder:
        return ctx.component(spec.component_kind, task.cylinder) if task.cylinder else None
    return ctx.component(spec.component_kind)


def task_is_high_pressure(task: WorkOrderTask) -> bool:
    """The kind opens the high-pressure side, or the part it names is on it."""
    return kind_spec(task.kind).high_pressure or (
        task.component is not None and task.component.is_high_pressure
    )


def task_form(task: WorkOrderTask, ctx: TaskContext, data: Any | None = None) -> TaskForm:
    """The task's form: bound to ``data`` when given (a post), else showing what is stored."""
    fitted = task_component(task, ctx)
    return kind_spec(task.kind).form(data, task=task, ctx=ctx, fitted=fitted)


def task_draft_clean(task: WorkOrderTask, data: Any, ctx: TaskContext) -> TaskDraft:
    """Read a task's posted form into a draft. A per-cylinder kind follows its cylinder to the
    part fitted there; a task made from a due item keeps that item's part, whatever is posted."""
    draft = task_form(task, ctx, data).draft()
    if task.bound_component_id is not None:
        draft.component_id = task.bound_component_id
    spec = kind_spec(task.kind)
    moved = "cylinder" in data and "cylinder" not in draft.errors
    if moved and spec.per_cylinder and spec.component_kind:
        comp = ctx.component(spec.component_kind, draft.cylinder) if draft.cylinder else None
        draft.component_id = comp.pk if comp else None
    if moved and draft.cylinder != task.cylinder:
        draft.description = title_for_cylinder(task, draft.cylinder)
    return draft


def title_for_cylinder(task: WorkOrderTask, cylinder: int | None) -> str:
    """The task's title when its cylinder changes: the cylinder it names is the new one; a
    title naming none gets it added, one naming it loses it when the cylinder is cleared."""
    title = task.description
    named = re.compile(rf"\bcylinder {task.cylinder}\b", re.IGNORECASE) if task.cylinder else None
    if named is not None and named.search(title):
        if cylinder is None:
            return re.sub(rf",?\s*\bcylinder {task.cylinder}\b", "", title, flags=re.I).strip()
        return named.sub(lambda m: f"{m.group(0)[:8]} {cylinder}", title)
    if cylinder is not None and not re.search(r"\bcylinder \d+\b", title, re.IGNORECASE):
        return f"{title}, cylinder {cylinder}"[:200]
    return title


def task_missing(task: WorkOrderTask, ctx: TaskContext) -> list[str]:
    """What a task still needs before the work order can close (plain sentences). A task
    marked not done needs nothing."""
    if task.is_not_done:
        return []
    return task_form(task, ctx).missing() + task_part_mismatch(task, ctx)


def task_part_mismatch(task: WorkOrderTask, ctx: TaskContext) -> list[str]:
    """A task made from a due item set to another part than the item's: it would record a
    change of the wrong part and leave the item due. Not overridable: set it back."""
    bound = task.bound_component_id
    if bound is None or task.component_id == bound:
        return []
    due = next((c for c in ctx.components if c.pk == bound), None)
    other = task.component.get_kind_display() if task.component else "another part"
    return [
        f"{task.description}: this task is for the "
        f"{due.get_kind_display().lower() if due else 'due list’s part'}, but the "
        f"{other.lower()} is set. Tap “Save” on the task to set it back; another filter "
        f"changed is another task."
    ]


def closed_task(task: WorkOrderTask, ctx: TaskContext) -> rules.ClosedTask:
    """A task as the closing rules see it."""
    spec = kind_spec(task.kind)
    limit = ctx.limit_for(task) if spec.chooses == "limit" else None
    value = task.entry.get("value")
    return rules.ClosedTask(
        kind=spec.rule_kind,
        cylinder=task.cylinder,
        value=float(value) if limit and isinstance(value, int | float) else None,
        low_limit=limit.low if limit else None,
        high_limit=limit.high if limit else None,
        label=limit_label(limit) if limit else task.description,
        per_cylinder=spec.per_cylinder,
    )


def task_event_fields(
    task: WorkOrderTask, ctx: TaskContext, comp: Component | None
) -> dict[str, Any]:
    """The fields of the service event a task done becomes (its kind's own, from the entry,
    after those every task has), ``comp`` the part it worked on."""
    spec = kind_spec(task.kind)
    fields: dict[str, Any] = {
        "parts_used": str(task.entry.get("parts_used") or ""),
        "notes": str(task.entry.get("notes") or ""),
    }
    if comp is not None:
        fields["component"] = comp
        fields["component_kind"] = comp.kind
    if spec.component_kind is not None:
        fields["component_kind"] = spec.component_kind
    fields.update(spec.event_fields(task, ctx, comp))
    return fields


# --------------------------------------------------------------------------- adding a task


@dataclass
class NewTask:
    kind: str
    cylinder: int | None
    component_id: int | None
    limit_id: int | None
    description: str


def new_task_clean(data: Any, ctx: TaskContext) -> tuple[NewTask | None, str]:
    """Read the 'add a task' form: (task, '') or (None, what is wrong)."""
    spec = KINDS.get(str(data.get("kind", "")))
    if spec is None:
        return None, "Choose what kind of task to add."
    cylinder: int | None = None
    if spec.per_cylinder:
        raw = str(data.get("cylinder", "")).strip()
        if not raw.isdigit() or not rules.cylinder_exists(
            cylinder=int(raw), cylinders=ctx.cylinders
        ):
            return None, f"Say which cylinder (1 to {ctx.cylinders})."
        cylinder = int(raw)
    chosen: Component | None = None
    if spec.component_kind:
        chosen = ctx.component(spec.component_kind, cylinder)
    limit = None
    if spec.chooses == "filter":
        raw = str(data.get("filter", ""))
        chosen = next((c for c in ctx.filters() if str(c.pk) == raw), None)
        if chosen is None:
            return None, "Choose which filter was changed."
    elif spec.chooses == "limit":
        raw = str(data.get("limit", ""))
        limit = ctx.limits.get(int(raw)) if raw.isdigit() else None
        if limit is None:
            return None, "Choose which measurement."
    description = str(data.get("description", "")).strip()[:120]
    if problem := text_error(description, label="Description", multiline=False):
        return None, problem
    if not description:
        if cylinder is not None:
            description = f"{spec.add_label}, cylinder {cylinder}"
        elif limit is not None:
            description = limit.name
        elif spec.chooses == "filter" and chosen is not None:
            description = f"{spec.add_label}: {chosen.get_kind_display()}"
        else:
            description = spec.add_label
    return NewTask(
        kind=spec.kind,
        cylinder=cylinder,
        component_id=chosen.pk if chosen else None,
        limit_id=limit.pk if limit else None,
        description=description[:200],
    ), ""
