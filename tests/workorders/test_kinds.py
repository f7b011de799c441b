"""The registry of task kinds (kinds.py): every kind declared once, and every kind walked
through the tablet (added, shown, saved as a draft through the views) and through the close
(the service event written with the registry's event kind and component kind)."""

from __future__ import annotations

from typing import Any

import pytest
from django.urls import reverse

from fleetfuel.accounts.models import Role
from fleetfuel.fleet.models import (
    FILTER_KINDS,
    ComponentKind,
)
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.planning.models import DueItem
from fleetfuel.workorders.close import work_order_close
from fleetfuel.workorders.fields import PickField, QuantityField, TaskField
from fleetfuel.workorders.forms import JobEntry, TaskForm
from fleetfuel.workorders.kinds import KINDS, Kind, kind_for_due_task
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from fleetfuel.workorders.selectors import task_context
from fleetfuel.workorders.task_entries import task_form
from services import rules

HTMX = {"HTTP_HX_REQUEST": "true"}


# ----------------------------------------------------------------- one entry per kind


def test_every_kind_has_one_entry() -> None:
    assert list(WorkOrderTask.Kind) == list(Kind)
    assert set(KINDS) == set(Kind)
    assert all(spec.kind == kind for kind, spec in KINDS.items())


@pytest.mark.parametrize("kind", list(KINDS))
def test_an_entry_names_what_the_other_apps_and_the_rules_know(kind: Kind) -> None:
    spec = KINDS[kind]
    assert spec.event_kind in ServiceEvent.Kind.values
    assert spec.rule_kind in rules.TASK_KINDS
    assert spec.component_kind is None or spec.component_kind in ComponentKind.values
    assert issubclass(spec.form, TaskForm) and spec.form is not TaskForm
    assert spec.add_label and spec.label == kind.label
    assert spec.chooses in ("", "filter", "limit")


def test_per_cylinder_and_high_pressure_marks_follow_the_fuel_system() -> None:
    # common practice: injectors and their high-pressure connectors are fitted one per
    # cylinder on the high-pressure side; the rail relief valve is on the high-pressure side
    # (one per rail); filters, the separator and measurements are on the supply side.
    marks = {kind: (spec.per_cylinder, spec.high_pressure) for kind, spec in KINDS.items()}
    assert marks[Kind.INJECTOR_REPLACE] == (True, True)
    assert marks[Kind.CONNECTOR_REPLACE] == (True, True)
    assert marks[Kind.RELIEF_VALVE_REPLACE] == (False, True)
    for kind in (
        Kind.FILTER_CHANGE,
        Kind.FILTER_CHECK,
        Kind.SEPARATOR_DRAIN,
        Kind.MEASUREMENT,
        Kind.INSPECTION,
    ):
        assert marks[kind] == (False, False)


def test_every_due_list_task_is_done_by_one_kind() -> None:
    for due_task in DueItem.Task:
        doers = [k for k, spec in KINDS.items() if due_task in spec.due_tasks]
        assert doers == [kind_for_due_task(due_task)], due_task


def test_the_role_that_may_override_is_the_managers() -> None:
    assert Role.MANAGER.value == rules.OVERRIDING_ROLE
    assert rules.override_permitted(role=Role.MANAGER)
    assert not rules.override_permitted(role=Role.MECHANIC)
    assert not rules.override_permitted(role=Role.AUDITOR)


# ----------------------------------------------------------------- the walk


def _typed(field: TaskField) -> str:
    """A valid value to type into a field (the first option of a select)."""
    if isinstance(field, PickField):
        return field.options[0][0]
    return "1.5" if isinstance(field, QuantityField) else "WALK-1"


def _card(html: str, task: WorkOrderTask) -> str:
    start = html.index(f'id="task-{task.pk}"')
    return html[start : html.index("</article>", start)]


@pytest.mark.parametrize("kind", list(KINDS))
def test_every_kind_through_the_tablet_and_the_close(
    kind: Kind, as_manager: Any, manager: Any, wo: WorkOrder, limits: Any
) -> None:
    spec = KINDS[kind]
    ctx = task_context(wo)
    asked = {
        "cylinder": "2",
        "filter": str(ctx.filters()[0].pk),
        "limit": str(next(iter(ctx.limits))),
    }
    added = as_manager.post(
        reverse("workorders:task_add", args=[wo.pk]),
        {"kind": kind, **{a: asked[a] for a in spec.asks}},
    )
    assert added.status_code == 302, added.content.decode()[:500]
    (task,) = wo.tasks.all()
    assert task.kind == kind and task.description

    # The page shows the kind's fields, and the caution exactly for a high-pressure kind.
    html = as_manager.get(reverse("workorders:detail", args=[wo.pk])).content.decode()
    card = _card(html, task)
    form = task_form(task, ctx)
    for name in form.fields:
        assert f'id="t{task.pk}-{name}"' in card, name
    assert ('class="caution"' in card) == spec.high_pressure

    # A draft saved through the view keeps every field as typed (numbers in SI).
    typed = {name: _typed(f) for name, f in form.task_fields()}
    saved = as_manager.post(reverse("workorders:task_save", args=[task.pk]), typed, **HTMX)
    assert saved.status_code == 200
    assert 'class="error"' not in saved.content.decode()
    task.refresh_from_db()
    assert task.draft_saved_at is not None
    assert task_form(task, task_context(wo)).missing() == []

    # The close writes one service event of the registry's kind, on the registry's part.
    outcome = work_order_close(
        work_order_id=wo.pk,
        user=manager,
        token=f"walk-{kind}",
        job=JobEntry(2_000.0, False, None, None, None),
        override=True,  # an injector alone needs its connector: the manager overrides
        override_reason="Walking every task kind through the close",
    )
    assert outcome.result == "closed", (outcome.violations, outcome.problems)
    (event,) = ServiceEvent.objects.filter(work_order=wo).exclude(
        kind=ServiceEvent.Kind.RULE_OVERRIDE
    )
    assert event.kind == spec.event_kind
    if spec.component_kind is not None:
        assert event.component_kind == spec.component_kind
        assert event.component is not None and event.component.kind == spec.component_kind
    elif spec.chooses == "filter":
        assert event.component_kind in FILTER_KINDS and event.component_id == task.component_id
    elif spec.chooses == "limit":
        assert event.component_kind == ctx.limits[task.entry["limit_id"]].plan.component_kind
    else:
        assert event.component_kind == "" and event.component is None
    if spec.per_cylinder:
        assert event.cylinder == task.cylinder == 1
    if event.component is not None:
        event.component.refresh_from_db()
        renewed = event.component.installed_hours == 2_000.0
        assert renewed == spec.renews_component
