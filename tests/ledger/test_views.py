"""The history pages: roles, filters, keyset pages, constant query counts, the export log and
the manager's correction form."""

from __future__ import annotations

import html
import re
from datetime import timedelta
from typing import Any

import pytest
from django.urls import reverse

from fleetfuel.ledger import urls as ledger_urls
from fleetfuel.ledger.actions import service_event_append, service_event_correct
from fleetfuel.ledger.models import ExportLog, ServiceEvent
from fleetfuel.pages import urls as pages_urls
from tests import factories as f

pytestmark = pytest.mark.django_db

HISTORY = reverse("ledger:history")


# The one POST under /history/ that an auditor may make: an export only reads the history
# (the log row it writes is the app's record of the export, not the auditor's).
READ_ONLY_POSTS = {"pages:export"}


def history_urls(event: ServiceEvent) -> dict[str, str]:
    """Every URL under /history/ by namespaced name: the ledger app's, and the exports composed
    above it (pages), with an existing entry or export where needed."""
    log = ExportLog.objects.create(requested_at=event.recorded_at, via="web", format="csv")
    args = {"ledger:correct": [event.pk], "pages:export_manifest": [log.pk]}
    found = {}
    for namespace, patterns in (("ledger", ledger_urls), ("pages", pages_urls)):
        for p in patterns.urlpatterns:
            name = f"{namespace}:{p.name}"
            if namespace == "ledger" or str(p.pattern).startswith("history/"):
                found[name] = reverse(name, args=args.get(name, []))
    return found


def test_history_needs_login(client: Any) -> None:
    response = client.get(HISTORY)
    assert response.status_code == 302 and reverse("accounts:login") in response["Location"]


def test_history_needs_a_role(client: Any) -> None:
    client.force_login(f.user_make(None))
    assert client.get(HISTORY).status_code == 403


def test_auditor_lands_on_the_history(as_auditor: Any) -> None:
    response = as_auditor.get(reverse("accounts:home"))
    assert response.status_code == 302 and response["Location"] == HISTORY


def test_auditor_sees_entries_and_export_buttons_but_no_correct_link(
    as_auditor: Any, unit: Any, mechanic: Any, add_events: Any
) -> None:
    add_events(unit, mechanic, 2)
    page = as_auditor.get(HISTORY)
    html = page.content.decode()
    assert page.status_code == 200
    assert html.count("Water separator drained") >= 2
    assert 'value="csv"' in html and 'value="xlsx"' in html and 'value="print"' in html
    assert "Correct…" not in html


def test_auditor_post_to_every_write_url_is_refused(
    as_auditor: Any, unit: Any, mechanic: Any, add_events: Any
) -> None:
    (event,) = add_events(unit, mechanic, 1)
    urls = history_urls(event)
    assert set(urls) - READ_ONLY_POSTS >= {"ledger:correct", "pages:export_manifest"}
    for name, url in urls.items():
        if name in READ_ONLY_POSTS:
            continue
        data = {"reason": "audit", "notes": "x", "performed_at": "2026-06-14T12:00"}
        response = as_auditor.post(url, data)
        # 403 where the role may not write; 405 where the URL takes no POST at all.
        assert response.status_code == (403 if name == "ledger:correct" else 405), name
    assert ServiceEvent.objects.count() == 1 and ExportLog.objects.count() == 1


def test_mechanic_cannot_correct_or_export(
    as_mechanic: Any, unit: Any, mechanic: Any, add_events: Any
) -> None:
    (event,) = add_events(unit, mechanic, 1)
    correct = reverse("ledger:correct", args=[event.pk])
    assert as_mechanic.post(correct, {"reason": "x"}).status_code == 403
    assert as_mechanic.post(reverse("pages:export"), {"format": "csv"}).status_code == 403
    assert as_mechanic.get(reverse("ledger:exports")).status_code == 403
    assert not ExportLog.objects.exists()


def test_filters_by_unit_site_date_and_kind(
    as_auditor: Any, unit: Any, other_site: Any, unit_class: Any, mechanic: Any, add_events: Any
) -> None:
    far = f.unit_make(site=other_site, unit_class=unit_class, fleet_number="S-900")
    add_events(unit, mechanic, 2)
    add_events(far, mechanic, 1, notes="far away")
    assert b"far away" in as_auditor.get(HISTORY).content
    assert b"far away" not in as_auditor.get(HISTORY, {"unit": "N-001"}).content
    assert b"far away" in as_auditor.get(HISTORY, {"site": other_site.pk}).content
    assert b"far away" not in as_auditor.get(HISTORY, {"kind": "inspection"}).content
    assert b"far away" not in as_auditor.get(HISTORY, {"date_to": "2020-01-01"}).content
    bad = as_auditor.get(HISTORY, {"date_from": "2026-02-01", "date_to": "2026-01-01"})
    assert b"The end date is before the start date." in bad.content


def test_mechanic_sees_only_his_sites(
    as_mechanic: Any, unit: Any, other_site: Any, unit_class: Any, mechanic: Any, add_events: Any
) -> None:
    far = f.unit_make(site=other_site, unit_class=unit_class, fleet_number="S-900")
    add_events(unit, mechanic, 1, notes="home-site entry")
    add_events(far, mechanic, 1, notes="far-site entry")
    html = as_mechanic.get(HISTORY).content
    assert b"home-site entry" in html and b"far-site entry" not in html


def test_keyset_pages_walk_every_entry_once(
    as_auditor: Any, unit: Any, mechanic: Any, add_events: Any
) -> None:
    from fleetfuel.ledger.selectors import HistoryScope, history_page

    add_events(unit, mechanic, 7)
    scope = HistoryScope(allowed_site_ids=None)
    seen, page = [], history_page(scope=scope, size=3)
    while True:
        seen.extend(e.seq for e in page.events)
        if not page.older:
            break
        page = history_page(scope=scope, older_than=page.older, size=3)
    assert seen == [7, 6, 5, 4, 3, 2, 1]
    back = history_page(scope=scope, newer_than=page.newer or "", size=3)
    assert [e.seq for e in back.events] == [4, 3, 2]


def test_history_page_links_to_older_and_newer_entries_keep_the_filters(
    as_auditor: Any, unit: Any, site: Any, unit_class: Any, mechanic: Any, add_events: Any
) -> None:
    add_events(unit, mechanic, 55)
    add_events(f.unit_make(site=site, unit_class=unit_class), mechanic, 3, notes="other unit")
    first = as_auditor.get(HISTORY, {"unit": "N-001"})
    assert len(first.context["page"].events) == 50
    older = html.unescape(re.search(r'href="([^"]+)"[^>]*>Older', first.content.decode())[1])
    second = as_auditor.get(HISTORY + older)
    assert [e.seq for e in second.context["page"].events] == [5, 4, 3, 2, 1]
    assert b"other unit" not in second.content
    newer = html.unescape(re.search(r'href="([^"]+)"[^>]*>← Newer', second.content.decode())[1])
    back = as_auditor.get(HISTORY + newer)
    assert [e.seq for e in back.context["page"].events] == list(range(55, 5, -1))


def test_the_kind_filter_finds_each_entry_by_the_kind_it_stands_for(
    as_auditor: Any, unit: Any, mechanic: Any, manager: Any
) -> None:
    """A filter change restated by a correction as a drain (effective.py) shows under drains
    and as a correction, not under filter changes; as recorded, the original is a filter
    change again."""
    recorded, kept = (
        service_event_append(
            unit=unit,
            kind=ServiceEvent.Kind.FILTER_CHANGED,
            performed_at=f.NOW - timedelta(days=days),
            recorded_by=mechanic,
        )
        for days in (1, 2)
    )
    fixed = service_event_correct(
        event=recorded,
        reason="was a drain",
        recorded_by=manager,
        kind=ServiceEvent.Kind.SEPARATOR_DRAINED,
    )

    def shown(**params: str) -> list[int]:
        return [e.pk for e in as_auditor.get(HISTORY, params).context["page"].events]

    assert shown(kind="separator_drained") == [fixed.pk]
    assert shown(kind="filter_changed") == [kept.pk]
    assert shown(kind="correction") == [fixed.pk]
    assert shown(kind="filter_changed", recorded="on") == [recorded.pk, kept.pk]


@pytest.mark.parametrize("size", [3, 30])
def test_history_query_count_does_not_grow_with_the_fleet(
    as_auditor: Any,
    unit_class: Any,
    mechanic: Any,
    add_events: Any,
    django_assert_num_queries: Any,
    size: int,
) -> None:
    sites = [f.site_make(), f.site_make()]
    for n in range(size):
        unit = f.unit_make(site=sites[n % 2], unit_class=unit_class)
        add_events(unit, mechanic, 2)
    # 1 session, 2 user, 3 role (groups), 4 the sites one may see (one query), 5 the page of
    # entries (units, sites and corrected entries joined; the person and the work order's
    # number as subqueries), 6 your recent exports, 7 the site list of the filter.
    with django_assert_num_queries(7):
        response = as_auditor.get(HISTORY)
    assert response.status_code == 200
    assert len(response.context["page"].events) == min(50, 2 * size)


def test_htmx_filter_returns_the_results_fragment(
    as_auditor: Any, unit: Any, mechanic: Any, add_events: Any
) -> None:
    add_events(unit, mechanic, 1)
    response = as_auditor.get(HISTORY, {"unit": "N-001"}, headers={"HX-Request": "true"})
    html = response.content.decode()
    assert html.lstrip().startswith('<div id="history-results">')
    assert "<html" not in html and response["Vary"].find("HX-Request") >= 0


def test_export_log_for_managers_shows_everyones_exports(
    client: Any, manager: Any, auditor: Any, unit: Any, mechanic: Any, add_events: Any
) -> None:
    add_events(unit, mechanic, 1)
    client.force_login(auditor)
    b"".join(client.post(reverse("pages:export"), {"format": "csv"}).streaming_content)
    client.force_login(manager)
    page = client.get(reverse("ledger:exports"))
    log = ExportLog.objects.get()
    assert page.status_code == 200 and log.sha256 in page.content.decode()
    assert reverse("pages:export_manifest", args=[log.pk]) in page.content.decode()


def test_manager_corrects_an_entry_from_the_history_page(
    as_manager: Any, manager: Any, unit: Any, mechanic: Any, add_events: Any
) -> None:
    (event,) = add_events(unit, mechanic, 1, part_number="PF-10")
    form_page = as_manager.get(HISTORY, {"correct": event.pk})
    assert b"Record correction" in form_page.content
    data = {name: form_page.context["correction_form"][name].value() or "" for name in
            form_page.context["correction_form"].fields}  # fmt: skip
    data.update(part_number="PF-12", reason="Wrong part number typed")
    response = as_manager.post(reverse("ledger:correct", args=[event.pk]), data)
    assert response.status_code == 302
    fixed = ServiceEvent.objects.get(corrects=event)
    assert fixed.part_number == "PF-12" and fixed.recorded_by == manager
    assert fixed.performed_at == event.performed_at and fixed.hour_meter == event.hour_meter


def test_correction_without_reason_is_shown_again_with_the_error(
    as_manager: Any, unit: Any, mechanic: Any, add_events: Any
) -> None:
    (event,) = add_events(unit, mechanic, 1)
    response = as_manager.post(
        reverse("ledger:correct", args=[event.pk]),
        {"performed_at": "2026-06-14T13:00", "notes": "x", "reason": ""},
    )
    assert response.status_code == 400
    assert b"This field is required." in response.content
    assert ServiceEvent.objects.count() == 1


def test_read_only_pages_refuse_post(as_auditor: Any) -> None:
    assert as_auditor.post(HISTORY).status_code == 405
    assert as_auditor.post(reverse("ledger:exports")).status_code == 405
