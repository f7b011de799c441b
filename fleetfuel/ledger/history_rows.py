"""The history page's rows as HTML, made once per page so the template only prints them.

Fifty rows of a dozen conditional cells cost the template engine more than the page's query;
here each row is one string, every value escaped (``html.escape``, as the template's
autoescape), through the same formatters the template used (``fmt``'s depot filters,
Django's ``floatformat`` and ``localize``).
"""

from __future__ import annotations

from collections.abc import Iterable
from html import escape as esc
from typing import Any

from django.template.defaultfilters import floatformat
from django.utils.formats import localize
from django.utils.safestring import SafeString

from fleetfuel.accounts.templatetags.fmt import clock, day, meter, when

from .exports import mechanic_name
from .models import ServiceEvent

PK_MARK = "987654321"  # stands for an entry's id in the "Correct…" link, replaced per row


def history_rows(events: Iterable[ServiceEvent], *, correct_href: str | None) -> list[SafeString]:
    """Each entry's ``<tr>``. ``correct_href``: the "Correct…" link with ``PK_MARK`` for the
    entry's id (None: no such column)."""
    return [_row(e, correct_href) for e in events]


def _row(e: Any, correct_href: str | None) -> SafeString:
    site = e.unit.site
    kind = f'<span class="entry-kind">{esc(e.shown_kind_label)}</span>'
    if e.corrects_id:
        kind += f'<br><span class="badge corr">correction of entry {e.corrects.seq}</span>'
    if e.is_corrected:
        kind += '<br><span class="badge fixed">replaced by a correction</span>'
    details = '<ul class="details">' + "".join(f"<li>{d}</li>" for d in _details(e)) + "</ul>"
    if e.corrects_id:
        details += _was(e.corrects, site)
    who = mechanic_name(
        first_name=e.recorded_by_first_name,
        last_name=e.recorded_by_last_name,
        username=e.recorded_by_username,
    )
    action = ""
    if correct_href is not None:
        href = esc(correct_href.replace(PK_MARK, str(e.pk)))
        action = f'<td><a class="btn" href="{href}#correct">Correct…</a></td>'
    return SafeString(
        f'<tr><td class="when">{esc(day(e.performed_at, site))}<br>'
        f'<span class="small muted">{esc(clock(e.performed_at, site))}</span></td>'
        f'<td><strong class="nowrap">{esc(e.unit.fleet_number)}</strong><br>'
        f'<span class="small muted">{esc(site.name)}</span></td>'
        f"<td>{kind}</td><td>{details}</td>"
        f'<td class="num">{esc(meter(e.hour_meter, site) or "–")}</td>'
        f"<td>{esc(who)}</td>"
        f'<td class="chain hide-narrow" title="{esc(e.hash)}">#{e.seq} · {esc(e.hash[:10])}…</td>'
        f"{action}</tr>"
    )


def _details(e: Any) -> list[str]:
    """The entry's details as HTML, each one list item's."""
    out: list[str] = []
    if e.component_kind:
        out.append(esc(e.component_kind_label + (f" cyl {e.cylinder}" if e.cylinder else "")))
    if e.part_number:
        out.append(esc(f"part {e.part_number}"))
    if e.old_serial or e.new_serial:
        out.append(esc(f"serial {e.old_serial or '?'} → {e.new_serial or '?'}"))
    if e.water_ml is not None:
        appearance = f" ({e.get_water_appearance_display().lower()})" if e.water_appearance else ""
        out.append(esc(f"water {floatformat(e.water_ml, '-1')} mL{appearance}"))
    if e.measurement_name:
        out.append(_measurement(e))
    if e.dp_before_bar is not None:
        out.append(esc(f"dP before {floatformat(e.dp_before_bar, '-2')} bar"))
    if e.parts_used:
        out.append(esc(f"parts: {e.parts_used}"))
    if e.work_order_number is not None:
        out.append(esc(f"work order {e.work_order_number}"))
    if e.notes:
        out.append(esc(e.notes))
    if e.reason:
        out.append(f"<em>reason: {esc(e.reason)}</em>")
    return out


def _measurement(e: Any) -> str:
    text = f"{e.measurement_name} {floatformat(e.value, '-3')}"
    if e.low_limit is not None or e.high_limit is not None:
        low = "–" if e.low_limit is None else localize(e.low_limit)
        high = "–" if e.high_limit is None else localize(e.high_limit)
        text += f" (limits {low} to {high})"
    if e.passed is True:
        return esc(text) + ' <span class="badge st-ok">pass</span>'
    if e.passed is False:
        return esc(text) + ' <span class="badge st-overdue">fail</span>'
    return esc(text)


def _was(o: ServiceEvent, site: Any) -> str:
    """The corrected entry as it was recorded, in one line."""
    parts = [o.shown_kind_label]
    if o.component_kind:
        parts.append(o.component_kind_label + (f" cyl {o.cylinder}" if o.cylinder else ""))
    parts.append(when(o.performed_at, site))
    if o.hour_meter is not None:
        parts.append(meter(o.hour_meter, site))
    if o.water_ml is not None:
        parts.append(f"water {floatformat(o.water_ml, '-1')} mL")
    if o.value is not None:
        parts.append(f"value {floatformat(o.value, '-3')}")
    return f'<p class="small muted was">Entry {o.seq} as recorded: {esc(", ".join(parts))}.</p>'
