"""Reads of the planning app for the due list, with its filters, counts and pages.

Its queries do not grow with the fleet (tests/pages/test_due_list.py); paging fetches one row
more than a page to know whether a next page exists, so it never counts the whole table.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import date, timedelta
from typing import Any

from django.core.exceptions import EmptyResultSet
from django.db import connection
from django.db.models import Exists, F, OuterRef, QuerySet

from .models import DueItem, UnitFlag

PAGE_SIZE = 50
# What a row of the list shows or sorts by; any other field loads on first use.
ROW_FIELDS = (
    "id", "unit_id", "site_id", "component_id", "task", "status", "rank", "urgency",
    "late_hours", "late_from", "basis", "due_hours", "hours_left", "due_on", "earliest_on",
    "latest_on", "projection_stale", "source_decision_id",
)  # fmt: skip
COUNT_CAP = 1000  # counts above it show as "1,000+": nobody reads further, nothing counts it
SORTS = {
    # What to do first (services.urgency), on the (urgency, late_from, -late_hours, id) index.
    "urgency": ["urgency", "late_from", "-late_hours", "id"],
    "due": ["due_on", "id"],  # (due_on, id) across depots, else (site, [status,] due_on, id)
    # By the fleet number the projection kept on the item, on the due items' own indexes.
    "unit": ["sort_fleet_number", "due_on", "task", "id"],
    "task": ["task", "due_on", "sort_fleet_number", "id"],
    "status": ["rank", "due_on", "sort_fleet_number", "id"],
}


@dataclass
class DuePage:
    items: list[DueItem]
    counts: dict[str, int]
    page: int
    has_next: bool
    flags_by_unit: dict[int, list[UnitFlag]] = field(default_factory=dict)


def due_items_filtered(
    *, site_ids: list[int] | None, data: dict[str, Any], today: date
) -> QuerySet[DueItem]:
    """The due items at these depots (None: at every depot) that the filters keep."""
    # Disposed units have no due items: the recompute skips them and clears their rows.
    qs = DueItem.objects.all() if site_ids is None else DueItem.objects.filter(site_id__in=site_ids)
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


def status_counts(base: QuerySet[DueItem]) -> dict[str, int]:
    """How many items of each status, counted up to COUNT_CAP + 1 (shown as "1,000+"): one
    query, a bounded count per status, each walking the (site, status, ...) index, so
    counting costs the same at 10 units as at 20,000. The filtered set is compiled once and
    each status is a parameter of it (five compiled subqueries cost 1.4 ms more a page)."""
    statuses = DueItem.Status.values
    try:
        sql, params = base.order_by().values("id", "status").query.sql_with_params()
    except EmptyResultSet:  # no depot to read: nothing to count
        return dict.fromkeys(statuses, 0)
    chosen = " UNION ALL ".join("SELECT %s AS status" for _ in statuses)
    with connection.cursor() as cursor:
        cursor.execute(
            f"SELECT s.status, (SELECT COUNT(*) FROM (SELECT 1 FROM ({sql}) AS b "
            f"WHERE b.status = s.status LIMIT {COUNT_CAP + 1}) AS c) FROM ({chosen}) AS s",
            [*params, *statuses],
        )
        counted = dict(cursor.fetchall())
    return {status: counted[status] for status in statuses}


def due_page(
    *,
    site_ids: list[int],
    data: dict[str, Any],
    today: date,
    annotations: Mapping[str, Any] | None = None,
    every_site: bool = False,
) -> DuePage:
    """The page of due items for these filters: three queries whatever the fleet size.

    ``annotations`` are added to each row in the page's query (the composing page passes
    what other apps say of an item, such as whether it is in an open work order).
    ``every_site``: the depots are every depot there is (by default, or named to each:
    ``accounts.access.sites_are_every_site``); the page's walk then has no depot condition.
    """
    base = due_items_filtered(site_ids=site_ids, data=data, today=today)
    # Query 1: counts by status over the filtered set (without the status filter itself).
    counts = status_counts(base)
    page = data.get("page") or 1
    # Query 2: one page of rows (+1 to know if there is a next page): the columns a row shows;
    # the unit's fleet number, the depot's name and display style and the class's name as
    # columns (not three more model instances a row); the caller's annotations. The page's
    # ids are picked by a subquery of ids alone, so a deep page skips narrow index entries,
    # not joined rows with their annotations worked out.
    order = SORTS.get(data.get("sort") or "urgency", SORTS["urgency"])
    # No depot condition where it keeps every row: PostgreSQL reads "site in (every depot's
    # id)" as a third fewer rows than there are, and then sorted them all rather than walk
    # the sort's index (10,000 units, a page in the middle: 18-96 -> 1-3 ms).
    qs = due_items_filtered(site_ids=None, data=data, today=today) if every_site else base
    qs = qs.filter(status=data["status"]) if data.get("status") else qs
    window = qs.order_by(*order).values("id")[(page - 1) * PAGE_SIZE : page * PAGE_SIZE + 1]
    rows = list(
        DueItem.objects.filter(pk__in=window)
        .only(*ROW_FIELDS)
        .annotate(
            fleet_number=F("unit__fleet_number"),
            site_name=F("unit__site__name"),
            site_style=F("unit__site__display_style"),
            class_name=F("unit__unit_class__name"),
            **(annotations or {}),
        )
        .order_by(*order)
    )
    has_next = len(rows) > PAGE_SIZE
    rows = rows[:PAGE_SIZE]
    # Query 3: the flags of the units on this page.
    flags: dict[int, list[UnitFlag]] = {}
    on_page = UnitFlag.objects.filter(unit_id__in={r.unit_id for r in rows})
    for flag in on_page.only("unit_id", "code", "title", "reason").order_by("code"):
        flags.setdefault(flag.unit_id, []).append(flag)
    return DuePage(items=rows, counts=counts, page=page, has_next=has_next, flags_by_unit=flags)
