"""Every intake recomputes the affected units' due items once the transaction commits, once
per unit: the round's readings, a fueling, a unit's sample, an engine event; a source's
sample or a delivery's sample reaches every unit fuelled from that source. (What is
recomputed is planning's; here, which units are sent and how often.)"""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest
from django.urls import reverse

from fleetfuel.fleet.models import Fueling, MeterReading
from fleetfuel.planning import signals
from tests import factories as f
from tests.factories import NOW

pytestmark = pytest.mark.usefixtures("clock_at_now")

AT = "2026-06-15T10:00"  # Europe/London, before tests.factories.NOW


@pytest.fixture
def sent(monkeypatch: Any) -> list[list[int]]:
    """The batches of unit ids sent to the recompute task, with nothing pending before."""
    batches: list[list[int]] = []
    monkeypatch.setattr(signals.recompute_units, "delay", lambda ids: batches.append(list(ids)))
    signals._pending.ids = set()
    return batches


@pytest.fixture
def fleet(site: Any, unit_class: Any) -> list[Any]:
    units = [
        f.unit_make(site=site, unit_class=unit_class, fleet_number=f"N-{i}") for i in (1, 2, 3)
    ]
    for unit in units:
        MeterReading.objects.create(unit=unit, taken_at=NOW - timedelta(days=2), hours=500.0)
    return units


def test_a_round_recomputes_each_saved_unit_once(
    as_manager: Any,
    site: Any,
    fleet: list[Any],
    sent: list[list[int]],
    django_capture_on_commit_callbacks: Any,
) -> None:
    a, b, c = fleet
    signals._pending.ids = set()
    data = {"site": site.code, "taken_at": AT, f"h-{a.pk}": "510", f"h-{b.pk}": "520"}
    data[f"h-{c.pk}"] = "9000"  # refused: not recomputed
    with django_capture_on_commit_callbacks(execute=True):
        as_manager.post(reverse("intake:hours"), data)
    assert sent == [sorted([a.pk, b.pk])]


def test_a_source_sample_reaches_every_unit_fuelled_from_it(
    as_manager: Any,
    site: Any,
    fleet: list[Any],
    sent: list[list[int]],
    django_capture_on_commit_callbacks: Any,
) -> None:
    a, b, c = fleet
    tank = f.source_make(name="North bulk tank", site=site)
    for unit in (a, b, b):
        Fueling.objects.create(
            unit=unit, source=tank, fueled_at=NOW - timedelta(days=5), litres=200
        )
    signals._pending.ids = set()
    data = {"site": site.code, "source": str(tank.pk), "delivered_at": AT, "amount": "9000"}
    data |= {"sample-reference": "D-1", "sample-sampled_at": AT, "sample-water_mg_kg": "240"}
    with django_capture_on_commit_callbacks(execute=True):
        assert as_manager.post(reverse("intake:delivery"), data).status_code == 302
    assert sent == [sorted([a.pk, b.pk])]  # c fills elsewhere


def test_a_delivery_without_a_sample_changes_no_projection(
    as_manager: Any,
    site: Any,
    fleet: list[Any],
    sent: list[list[int]],
    django_capture_on_commit_callbacks: Any,
) -> None:
    tank = f.source_make(name="North bulk tank", site=site)
    Fueling.objects.create(
        unit=fleet[0], source=tank, fueled_at=NOW - timedelta(days=5), litres=200
    )
    signals._pending.ids = set()
    data = {"site": site.code, "source": str(tank.pk), "delivered_at": AT, "amount": "9000"}
    with django_capture_on_commit_callbacks(execute=True):
        assert as_manager.post(reverse("intake:delivery"), data).status_code == 302
    assert sent == []


@pytest.mark.parametrize(
    ("name", "data"),
    [
        ("fuel", {"unit": "N-2", "fueled_at": AT, "amount": "150"}),
        (
            "event",
            {
                "unit": "N-2",
                "occurred_at": AT,
                "spn": "97",
                "fmi": "0",
                "occurrences": "1",
                "kind": "water_in_fuel",
            },
        ),
        (
            "sample",
            {
                "taken_from": "unit",
                "unit": "N-2",
                "reference": "U-1",
                "sampled_at": AT,
                "water_mg_kg": "300",
            },
        ),
    ],
)
def test_a_units_own_entry_recomputes_that_unit(
    as_manager: Any,
    site: Any,
    fleet: list[Any],
    sent: list[list[int]],
    django_capture_on_commit_callbacks: Any,
    name: str,
    data: dict[str, str],
) -> None:
    signals._pending.ids = set()
    with django_capture_on_commit_callbacks(execute=True):
        assert (
            as_manager.post(reverse(f"intake:{name}"), {"site": site.code} | data).status_code
            == 302
        )
    assert sent == [[fleet[1].pk]]


def test_a_refused_entry_recomputes_nothing(
    as_manager: Any,
    site: Any,
    fleet: list[Any],
    sent: list[list[int]],
    django_capture_on_commit_callbacks: Any,
) -> None:
    signals._pending.ids = set()
    with django_capture_on_commit_callbacks(execute=True):
        as_manager.post(
            reverse("intake:fuel"),
            {"site": site.code, "unit": "N-2", "fueled_at": AT, "amount": "-1"},
        )
    assert sent == []
