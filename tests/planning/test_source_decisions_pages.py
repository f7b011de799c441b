"""The manager's view of source decisions: a card on the due list, a page where what was done
is recorded. Managers write, auditors read, mechanics are refused; other sites see nothing.
(The range rule itself: tests/services/test_source_quality.py.)"""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest
from django.urls import reverse

from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.source_models import SourceDecision
from tests import factories as f
from tests.planning.builders import history_make, sample_make

NOW = f.NOW


@pytest.fixture
def decision(clock_at_now: Any, site: Any, unit_class: Any) -> SourceDecision:
    tank = f.source_make(name="North bulk tank", site=site)
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="N-7")
    history_make(unit=unit, source=tank, days=10, hours_per_day=6.0, burn_l_per_h=20.0)
    # 22/20/17: four ISO 4406 scale numbers over the WWFC 6th ed. 18/16/13 at >=4 um(c).
    sample_make(source=tank, at=NOW - timedelta(days=4, hours=2), code="22/20/17", ref="S-77")
    due_items_recompute(unit_ids=[unit.pk], now=NOW)  # the projection run, then the sources
    return SourceDecision.objects.get()


def test_the_due_list_shows_one_card_with_the_units_and_litres(
    decision: SourceDecision, as_manager: Any
) -> None:
    html = as_manager.get(reverse("pages:due_list")).content.decode()
    assert html.count('class="card source-decision"') == 1
    assert "North bulk tank: polish, quarantine or resample this tank" in html
    # Fuelled daily an hour before each reading: 5 fuelings of 6 h x 20 L/h fall after the
    # sample (taken 4 days 2 hours ago; hand-worked), shown in the metric site's litres.
    assert "N-7</a> fuelled 600 L, burned " in html and "S-77" in html
    assert "600 L were fuelled" in html and "has been burned by now" in html
    assert "Per unit:" not in html  # the card lists the units itself
    assert reverse("planning:source_decision", args=[decision.pk]) in html


def test_the_decision_page_gives_each_unit_its_litres_fuelled_and_burned(
    decision: SourceDecision, as_manager: Any
) -> None:
    row = decision.reached.get()
    assert row.litres_burned is not None and 0 < row.litres_burned < row.litres
    html = as_manager.get(reverse("planning:source_decision", args=[decision.pk])).content
    page = html.decode()
    assert "Burned so far" in page and f"{row.litres_burned:,.0f} L" in page
    assert "Per unit:" not in page  # the table lists them; the stored explanation has it
    assert f"Per unit: N-7 fuelled 600 L, burned {row.litres_burned:,.0f} L." in (
        decision.explanation
    )


def test_a_manager_records_what_was_done_and_the_card_goes(
    decision: SourceDecision, as_manager: Any, manager: Any
) -> None:
    url = reverse("planning:source_decision", args=[decision.pk])
    page = as_manager.get(url)
    assert page.status_code == 200 and "Record and close" in page.content.decode()
    done = as_manager.post(
        url, {"outcome": "quarantined", "note": "Tank locked off", "new_sample_reference": ""}
    )
    assert done.status_code == 302
    decision.refresh_from_db()
    assert decision.outcome == "quarantined" and decision.resolved_by == manager
    assert decision.resolved_at is not None and decision.note == "Tank locked off"
    html = as_manager.get(url).content.decode()
    assert "Tank quarantined" in html and "Record and close" not in html
    assert "source-decision" not in as_manager.get(reverse("pages:due_list")).content.decode()


def test_an_unknown_outcome_is_refused_with_the_form(
    decision: SourceDecision, as_manager: Any
) -> None:
    url = reverse("planning:source_decision", args=[decision.pk])
    response = as_manager.post(url, {"outcome": "superseded"})
    assert response.status_code == 400
    decision.refresh_from_db()
    assert decision.is_open


def test_an_auditor_reads_but_never_writes(decision: SourceDecision, as_auditor: Any) -> None:
    url = reverse("planning:source_decision", args=[decision.pk])
    page = as_auditor.get(url)
    assert page.status_code == 200 and "Record and close" not in page.content.decode()
    assert as_auditor.post(url, {"outcome": "accepted"}).status_code == 403
    decision.refresh_from_db()
    assert decision.is_open


def test_a_mechanic_is_refused(decision: SourceDecision, as_mechanic: Any) -> None:
    url = reverse("planning:source_decision", args=[decision.pk])
    assert as_mechanic.get(url).status_code == 403


def test_a_manager_of_another_site_sees_nothing(
    decision: SourceDecision, client: Any, other_site: Any
) -> None:
    client.force_login(f.user_make("manager", sites=[other_site]))
    url = reverse("planning:source_decision", args=[decision.pk])
    assert client.get(url).status_code == 404
    assert client.post(url, {"outcome": "accepted"}).status_code == 404
    assert "source-decision" not in client.get(reverse("pages:due_list")).content.decode()
