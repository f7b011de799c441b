"""The unit page's due items and recent service history as HTML rows, made once per page.

The template engine spent more on these two tables (a few filters per cell, 25 history rows)
than the page's queries; here each row is one string, every value escaped (``html.escape``,
as the template's autoescape) and shown through the same formatters (``fmt``'s depot
filters, ``basis_label``, the ``qty`` tag's ``display_quantity``).
"""

from __future__ import annotations

from collections.abc import Iterable
from html import escape as esc
from typing import Any

from django.utils.safestring import SafeString

from fleetfuel.accounts.templatetags.fmt import day, hours, meter, prose
from fleetfuel.ledger.exports import mechanic_name
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.planning.models import DueItem
from fleetfuel.planning.templatetags.fleetfuel_tags import basis_label
from services.units import display_quantity

from .due_rows import STALE, STATUS_BADGES


def due_item_rows(items: Iterable[DueItem], site: Any) -> list[SafeString]:
    """Each due item's ``<tr>``: task, status, due date (and its window), due hours, what
    governs it and the explanation."""
    return [_due_row(item, site) for item in items]


def _due_row(item: DueItem, site: Any) -> SafeString:
    status = STATUS_BADGES[item.status] + (STALE if item.projection_stale else "")
    due = esc(day(item.due_on, site))
    if item.earliest_on != item.latest_on:
        window = f"between {day(item.earliest_on, site)} and {day(item.latest_on, site)}"
        due += f'<div class="small muted">{esc(window)}</div>'
    due_hours = "—" if item.due_hours is None else esc(hours(item.due_hours, site))
    lines = "".join(f"<li>{esc(prose(line, site))}</li>" for line in item.explanation)
    return SafeString(
        f"<tr><td>{esc(item.get_task_display())}</td><td>{status}</td>\n"
        f"        <td>{due}</td>\n"
        f'        <td class="num">{due_hours}</td>\n'
        f'        <td class="small">{esc(basis_label(item.basis))}</td>\n'
        f'        <td class="small"><details><summary>Explanation</summary><ul>{lines}</ul>'
        "</details></td></tr>"
    )


def event_rows(events: Iterable[ServiceEvent], site: Any) -> list[SafeString]:
    """Each recent entry's ``<tr>``: when, what, cylinder, hour meter, detail, by whom."""
    return [_event_row(e, site) for e in events]


def _event_row(e: ServiceEvent, site: Any) -> SafeString:
    detail = ""
    if e.water_ml is not None:
        water = display_quantity(value=e.water_ml, quantity="volume_ml", system=site.unit_system)
        detail += esc(f"{water} water, {e.get_water_appearance_display().lower()}")
    if e.new_serial:
        detail += esc(f"{e.old_serial} → {e.new_serial}")
    elif e.part_number:
        detail += esc(e.part_number)
    person = e.recorded_by
    who = mechanic_name(
        first_name=person.first_name, last_name=person.last_name, username=person.username
    )
    return SafeString(
        f"<tr><td>{esc(day(e.performed_at, site))}</td><td>{esc(e.get_kind_display())}</td>"
        f'<td>{e.cylinder or ""}</td><td class="num">{esc(meter(e.hour_meter, site))}</td>\n'
        f'      <td class="small">{detail}</td>\n'
        f"      <td>{esc(who)}</td></tr>"
    )
