"""Reads of the planning app: the due list, with its filters, counts and pages.

The number of queries does not grow with the fleet (see tests/planning/test_due_list.py).
Paging fetches one row more than a page to know whether a next page exists, so it never
counts the whole table.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, timedelta
from typing import Any

from django import forms
from django.db.models import Count, Exists, OuterRef, QuerySet
from django.shortcuts import get_object_or_404

from fleetfuel.fleet.models import Site, UnitClass
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask

from .models import DueItem, UnitFlag

PAGE_SIZE = 50
SORTS = {
    "due": ["due_on", "id"],  # walks the (site, [status,] due_on, id) index
    "unit": ["unit__fleet_number", "due_on", "task", "id"],
    "task": ["task", "due_on", "unit__fleet_number", "id"],
    "status": ["rank", "due_on", "unit__fleet_number", "id"],
}


class DueFilterForm(forms.Form):
    """The due list's filters: a plain GET form (works without JavaScript)."""

    site = forms.ModelChoiceField(
        queryset=Site.objects.none(), required=False, empty_label="All sites"
    )
    unit_class = forms.ModelChoiceField(
        queryset=UnitClass.objects.none(), required=False, empty_label="All classes"
    )
    task = forms.ChoiceField(choices=[("", "All tasks"), *DueItem.Task.choices], required=False)
    status = forms.ChoiceField(
        choices=[("", "Any status"), *DueItem.Status.choices], required=False
    )
    within_days = forms.IntegerField(
        min_value=0, max_value=3650, required=False, label="Due within (days)"
    )
    within_hours = forms.FloatField(
        min_value=0, max_value=100_000, required=False, label="Due within (h)"
    )
    flagged = forms.BooleanField(required=False, label="Flagged units only")
    q = forms.CharField(required=False, max_length=30, label="Fleet number")
    sort = forms.ChoiceField(
        choices=[("due", "Due date"), ("unit", "Unit"), ("task", "Task"), ("status", "Status")],
        required=False,
    )
    page = forms.IntegerField(min_value=1, required=False)

    def __init__(self, *args: Any, sites: QuerySet[Site], classes: QuerySet[UnitClass], **kw: Any):
        super().__init__(*args, **kw)
        self.fields["site"].queryset = sites  # type: ignore[attr-defined]
        self.fields["unit_class"].queryset = classes  # type: ignore[attr-defined]


@dataclass
class DuePage:
    items: list[DueItem]
    counts: dict[str, int]
    page: int
    has_next: bool
    flags_by_unit: dict[int, list[UnitFlag]] = field(default_factory=dict)


def due_items_filtered(
    *, site_ids: list[int], data: dict[str, Any], today: date
) -> QuerySet[DueItem]:
    # Disposed units have no due items: the recompute skips them and clears their rows.
    qs = DueItem.objects.filter(site_id__in=site_ids)
    if data.get("site"):
        qs = qs.filter(site_id=data["site"].pk)
    if data.get("unit_class"):
        qs = qs.filter(unit__unit_class=data["unit_class"])
    if data.get("task"):
        qs = qs.filter(task=data["task"])
    if data.get("within_days") is not None:
        qs = qs.filter(due_on__lte=today + timedelta(days=data["within_days"]))
    if data.get("within_hours") is not None:
        # Hours left = due hours minus the engine hours the projection started from.
        qs = qs.filter(hours_left__lte=data["within_hours"])
    if data.get("flagged"):
        qs = qs.filter(Exists(UnitFlag.objects.filter(unit_id=OuterRef("unit_id"))))
    if data.get("q"):
        qs = qs.filter(unit__fleet_number__icontains=data["q"].strip())
    return qs


def due_page(*, site_ids: list[int], data: dict[str, Any], today: date) -> DuePage:
    """The page of due items for these filters: four queries whatever the fleet size."""
    base = due_items_filtered(site_ids=site_ids, data=data, today=today)
    # Query 1: counts by status over the filtered set (without the status filter itself).
    counts = dict.fromkeys(DueItem.Status.values, 0)
    for row in base.values("status").annotate(n=Count("id")).order_by():
        counts[row["status"]] = row["n"]
    qs = base.filter(status=data["status"]) if data.get("status") else base
    page = data.get("page") or 1
    in_open_order = WorkOrderTask.objects.filter(
        due_item_id=OuterRef("pk"), work_order__status=WorkOrder.Status.OPEN
    )
    # Query 2: one page of rows (+1 to know if there is a next page), with unit, site,
    # class and component joined, and whether each sits in an open work order.
    rows = list(
        qs.select_related("unit", "unit__site", "unit__unit_class", "component")
        .annotate(in_work_order=Exists(in_open_order))
        .order_by(*SORTS.get(data.get("sort") or "due", SORTS["due"]))
        .defer("inputs")[(page - 1) * PAGE_SIZE : page * PAGE_SIZE + 1]
    )
    has_next = len(rows) > PAGE_SIZE
    rows = rows[:PAGE_SIZE]
    # Query 3: the flags of the units on this page.
    flags: dict[int, list[UnitFlag]] = {}
    for flag in UnitFlag.objects.filter(unit_id__in={r.unit_id for r in rows}).order_by("code"):
        flags.setdefault(flag.unit_id, []).append(flag)
    return DuePage(items=rows, counts=counts, page=page, has_next=has_next, flags_by_unit=flags)


def due_item_for_user(*, site_ids: list[int], pk: int) -> DueItem:
    return get_object_or_404(
        DueItem.objects.select_related("unit", "unit__site", "component"),
        pk=pk,
        site_id__in=site_ids,
    )
