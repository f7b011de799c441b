"""The due list's rows as display strings, made once per page so the template only prints them.

Rendering a row costs a handful of variable lookups: every date, number, label, link and hover
text is a string here. Rows are grouped under the open fuel-source decision their dirt estimate
counts (in the order of the decision's most urgent row on the page); other rows stay in their
place in the page's order.
"""

from __future__ import annotations

import functools
from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import date
from html import escape as esc
from typing import Any

from django.urls import reverse
from django.utils.html import format_html
from django.utils.safestring import SafeString

from fleetfuel.planning.due_selectors import COUNT_CAP
from fleetfuel.planning.models import DueItem, UnitFlag
from fleetfuel.planning.source_models import SourceDecision
from fleetfuel.planning.templatetags.fleetfuel_tags import BASIS_LABELS
from services import display
from services.common import Basis
from services.urgency import timing_words

TASK_SHORT = {
    DueItem.Task.PRIMARY_FILTER: "Primary filter",
    DueItem.Task.FINE_FILTER: "Fine filter",
    DueItem.Task.SEPARATOR_DRAIN: "Drain separator",
}
BASIS_SHORT = {
    Basis.CONTAMINANT_BUDGET: "Dirt estimate",
    Basis.PLAN_HOURS: "Plan hours",
    Basis.PLAN_DAYS: "Plan days",
    Basis.FUEL_VOLUME: "Plan fuel volume",
    Basis.DIFFERENTIAL_PRESSURE: "dP trend",
    Basis.WATER_LEVEL: "Water level",
    Basis.WATER_EVENT: "Water alarm",
}
STATUS_TITLES = {
    DueItem.Status.CHECK: "Only the dirt estimate has run out: read the filter's dP or "
    "restriction indicator before changing it",
}
STALE = SafeString(
    ' <span class="badge st-due" title="Its inputs changed and the recompute is still owed; it '
    'runs within minutes.">Out of date: recompute pending</span>'
)
_PK = 987654321  # a placeholder id: links are made by replacing it, not by reverse() per row


@dataclass(slots=True)
class DueRow:
    """One row: plain strings (escaped by the template) and, where a cell's markup depends on
    the item, that cell's HTML made here with its parts escaped (format_html)."""

    pk: int
    detail_url: str
    select: SafeString  # the checkbox, or a dash when a work order holds the item
    unit: SafeString  # fleet number linked, flags, class
    site_name: str
    task_short: str
    task_long: str
    status: SafeString  # the badge, and the out-of-date mark
    timing: str
    timing_title: str
    basis_short: str
    basis_long: str
    order: SafeString  # the work order holding it, linked (empty when none)

    def html(self) -> SafeString:
        """The row and its explanation row (filled on "Why?"), made here in one string: a
        page of rows through the template engine cost more than the rest of the page."""
        detail = f"detail-{self.pk}"
        return SafeString(
            f'<tr id="row-{self.pk}" class="due-row">'
            f'<td class="c-sel">{self.select}</td>'
            f'<td class="c-unit">{self.unit}</td>'
            f'<td class="c-site">{esc(self.site_name)}</td>'
            f'<td class="c-task" title="{esc(self.task_long)}">{esc(self.task_short)}</td>'
            f'<td class="c-status">{self.status}</td>'
            f'<td class="c-when" title="{esc(self.timing_title)}">{esc(self.timing)}</td>'
            f'<td class="c-basis" title="{esc(self.basis_long)}">{esc(self.basis_short)}</td>'
            f'<td class="c-wo">{self.order}</td>'
            f'<td class="c-why"><a class="btn why" href="{self.detail_url}" '
            f'hx-get="{self.detail_url}" hx-target="#{detail}" hx-swap="innerHTML" '
            f'aria-controls="{detail}">Why?</a></td></tr>\n'
            f'<tr class="detail"><td colspan="9" id="{detail}" class="explain"></td></tr>\n'
        )


@dataclass(slots=True)
class DueGroup:
    """Rows in page order; under a decision when ``decision`` is set."""

    decision: SourceDecision | None
    rows: list[DueRow] = field(default_factory=list)


class _Links:
    def __init__(self) -> None:
        self.unit = reverse("pages:unit_detail", args=[_PK])
        self.detail = reverse("pages:due_item_detail", args=[_PK])
        self.order = reverse("workorders:detail", args=[_PK])

    @staticmethod
    def of(pattern: str, pk: int) -> str:
        return pattern.replace(str(_PK), str(pk))


@functools.lru_cache(maxsize=1024)
def _d(day: date, style: str) -> str:
    return display.day_text(day, style)


def _timing(item: DueItem, today: date, style: str) -> tuple[str, str]:
    """The row's 'overdue by' / 'due in' words and their hover text (the dates and hours)."""
    since = item.late_from or item.due_on
    estimate = item.basis == Basis.CONTAMINANT_BUDGET and item.late_hours > 0
    words = timing_words(
        days_late=(today - since).days,
        hours_late=item.late_hours,
        estimate=estimate,
        style=style,
    )
    title = f"Due {_d(item.due_on, style)}"
    if item.earliest_on != item.latest_on:
        title += f" (between {_d(item.earliest_on, style)} and {_d(item.latest_on, style)})"
    if item.due_hours is not None:
        title += f" at {display.hours_text(item.due_hours, style)}"
    if estimate:
        title += (
            f"; the dirt estimate ran out about {display.hours_text(item.late_hours, style)} "
            f"ago (around {_d(since, style)}) at today's fuel: read the filter's dP"
        )
    return words, title + "."


def _flags(flags: list[UnitFlag]) -> str:
    if not flags:
        return ""
    title = esc(" ".join(f"{f.title}: {f.reason}" for f in flags))
    text = esc("; ".join(f.title for f in flags))
    return f' <span class="badge flag" title="{title}">Flag: {text}</span>'


def _status_badges() -> dict[str, SafeString]:
    """Each status's badge, made once (its label and, for "check", what to do first)."""
    return {
        value: format_html(
            '<span class="badge st-{}" title="{}">{}</span>',
            value,
            STATUS_TITLES.get(value, ""),
            label,
        )
        for value, label in DueItem.Status.choices
    }


STATUS_BADGES = _status_badges()
TASK_LONG = {value: str(label) for value, label in DueItem.Task.choices}


def _row(item: Any, today: date, links: _Links, flags: list[UnitFlag]) -> DueRow:
    """One row's strings; every text from the database is escaped here (html.escape)."""
    style = item.site_style or display.DEFAULT_STYLE
    timing, timing_title = _timing(item, today, style)
    task_long = TASK_LONG.get(item.task, item.task)
    fleet_number = esc(item.fleet_number)
    if getattr(item, "open_work_order_id", None):
        select = '<span class="muted" title="Already in an open work order">\u2014</span>'
        number = esc(item.open_work_order_number)
        order = (
            f'<a class="badge st-ok" href="{links.of(links.order, item.open_work_order_id)}" '
            f'title="In open work order {number}">{number}</a>'
        )
    else:
        select = (
            f'<input type="checkbox" name="item" value="{item.pk}" '
            f'aria-label="Select {fleet_number} {esc(task_long)}">'
        )
        order = ""
    return DueRow(
        pk=item.pk,
        detail_url=links.of(links.detail, item.pk),
        select=SafeString(select),
        unit=SafeString(
            f'<a href="{links.of(links.unit, item.unit_id)}">{fleet_number}</a>{_flags(flags)} '
            f'<span class="muted small">{esc(item.class_name)}</span>'
        ),
        site_name=item.site_name,
        task_short=TASK_SHORT.get(item.task, item.task),
        task_long=task_long,
        status=SafeString(STATUS_BADGES[item.status] + (STALE if item.projection_stale else "")),
        timing=timing,
        timing_title=timing_title,
        basis_short=BASIS_SHORT.get(item.basis, item.basis),
        basis_long=BASIS_LABELS.get(item.basis, item.basis),
        order=SafeString(order),
    )


def due_groups(
    *,
    items: Iterable[Any],
    flags_by_unit: dict[int, list[UnitFlag]],
    decisions: Iterable[SourceDecision],
    today: date,
) -> tuple[list[DueGroup], list[SourceDecision]]:
    """The page's rows in groups, and the open decisions with no row on this page."""
    links = _Links()
    by_pk = {d.pk: d for d in decisions}
    groups: list[DueGroup] = []
    under: dict[int, DueGroup] = {}
    for item in items:
        row = _row(item, today, links, flags_by_unit.get(item.unit_id, []))
        decision = by_pk.get(getattr(item, "source_decision_id", None) or 0)
        if decision is None:
            if not groups or groups[-1].decision is not None:
                groups.append(DueGroup(decision=None))
            groups[-1].rows.append(row)
        elif decision.pk in under:
            under[decision.pk].rows.append(row)
        else:
            under[decision.pk] = DueGroup(decision=decision, rows=[row])
            groups.append(under[decision.pk])
    elsewhere = [d for pk, d in by_pk.items() if pk not in under]
    return groups, elsewhere


def count_chips(counts: dict[str, int]) -> list[tuple[str, str, str]]:
    """(status, label, number) for each status; a count past the cap reads "1,000+"."""
    return [
        (
            status,
            str(DueItem.Status(status).label),
            f"{COUNT_CAP:,}+" if n > COUNT_CAP else f"{n:,}",
        )
        for status, n in counts.items()
    ]
