"""Fuelings, deliveries with a sample, lab results and engine events, each on its own page.

Sources: 1 US gallon = 3.785411784 L exactly (NIST SP 811 (2008), Appendix B.8); ISO 4406:2021
Table 1 scale numbers (code 19: more than 2,500 up to 5,000 particles per mL; 17: more than
640 up to 1,300; 13: more than 40 up to 80); SPNs above 520,191 are manufacturer-proprietary
and the largest SPN is 524,287 (19 bits) (SAE J1939-71); FMIs run 0-31 (SAE J1939-73).
A fueling may exceed the tank's stated capacity by 10% at most (common practice).
"""

from __future__ import annotations

from typing import Any

import pytest
from django.urls import reverse

from fleetfuel.fleet.models import Delivery, EngineEvent, Fueling, FuelSample
from tests import factories as f

pytestmark = pytest.mark.usefixtures("clock_at_now")

AT = "2026-06-15T10:00"  # Europe/London, before tests.factories.NOW


@pytest.fixture
def tank(site: Any) -> Any:
    return f.source_make(name="North bulk tank", site=site)


@pytest.fixture
def sized(unit: Any) -> Any:
    unit.unit_class.typical_tank_l = 400.0
    unit.unit_class.save()
    return unit


def fueling(client: Any, site: Any, **kw: Any) -> Any:
    data = {"site": site.code, "unit": "N-001", "fueled_at": AT, "amount": "250"} | kw
    return client.post(reverse("intake:fuel"), data)


def test_a_fueling_is_saved_and_the_next_form_keeps_source_and_time(
    as_manager: Any, site: Any, sized: Any, tank: Any
) -> None:
    response = fueling(as_manager, site, unit="n-001", source=str(tank.pk))
    assert response.status_code == 302
    assert f"source={tank.pk}" in response["Location"] and "at=2026-06-15T10" in response[
        "Location"
    ].replace("%3A", ":")
    (saved,) = Fueling.objects.all()
    assert (saved.unit, saved.source, saved.litres) == (sized, tank, 250.0)


def test_us_gallons_at_a_us_depot_are_stored_in_litres(
    as_manager: Any, site: Any, sized: Any
) -> None:
    site.unit_system = "us"
    site.save()
    fueling(as_manager, site, amount="100")
    (saved,) = Fueling.objects.all()
    assert saved.litres == pytest.approx(378.5411784)  # NIST SP 811 B.8: 1 gal = 3.785411784 L


@pytest.mark.parametrize(
    ("amount", "reason"),
    [
        ("900", "more than the tank holds (400 L"),
        ("441", "accepted up to 440 L"),
        ("nan", "is not a number"),
        ("-3", "cannot be below 0"),
        ("0", "more than zero"),
        ("1e400", "is not a number"),
    ],
)
def test_a_fueling_that_cannot_be_is_refused(
    as_manager: Any, site: Any, sized: Any, amount: str, reason: str
) -> None:
    response = fueling(as_manager, site, amount=amount)
    assert response.status_code == 200 and reason in response.content.decode()
    assert not Fueling.objects.exists()


def test_a_fueling_names_what_is_wrong_with_the_unit_and_the_time(
    as_manager: Any, site: Any, sized: Any, other_site: Any, unit_class: Any
) -> None:
    f.unit_make(site=other_site, unit_class=unit_class, fleet_number="S-001")
    page = fueling(as_manager, site, unit="S-001").content.decode()
    assert "No active unit “S-001” at North Depot." in page
    page = fueling(as_manager, site, unit="N-0\x0001").content.decode()
    assert "Null characters are not allowed." in page
    page = fueling(as_manager, site, fueled_at="2026-12-25T10:00").content.decode()
    assert "The fueling is dated 2026-12-25 10:00, in the future" in page
    assert not Fueling.objects.exists()


def lab(**kw: str) -> dict[str, str]:
    return {"reference": "LR-1", "sampled_at": AT, "lab": "County Fuel Lab"} | kw


def test_a_delivery_with_its_sample_is_saved_together(
    as_manager: Any, site: Any, tank: Any
) -> None:
    data = {
        "site": site.code,
        "source": str(tank.pk),
        "delivered_at": AT,
        "amount": "12000",
        "supplier": "Valley Fuels",
        "ticket": "T-88121",
    } | {f"sample-{k}": v for k, v in lab(iso4406="≥22/20/17", water_mg_kg="95").items()}
    assert as_manager.post(reverse("intake:delivery"), data).status_code == 302
    (delivery,) = Delivery.objects.all()
    assert (delivery.supplier, delivery.ticket, delivery.litres) == (
        "Valley Fuels",
        "T-88121",
        12_000,
    )
    (sample,) = FuelSample.objects.all()
    assert (sample.delivery, sample.source, sample.unit) == (delivery, tank, None)
    assert (sample.code_4, sample.code_6, sample.code_14) == (22, 20, 17)


def test_a_delivery_with_a_bad_sample_saves_neither(as_manager: Any, site: Any, tank: Any) -> None:
    data = {"site": site.code, "source": str(tank.pk), "delivered_at": AT, "amount": "12000"}
    data |= {f"sample-{k}": v for k, v in lab(iso4406="16/18/13").items()}
    page = as_manager.post(reverse("intake:delivery"), data).content.decode()
    assert "larger size cannot have more particles" in page
    assert not Delivery.objects.exists() and not FuelSample.objects.exists()
    # Without a sample, the delivery alone is fine.
    data = {k: v for k, v in data.items() if not k.startswith("sample-")}
    assert as_manager.post(reverse("intake:delivery"), data).status_code == 302
    assert Delivery.objects.count() == 1 and not FuelSample.objects.exists()


def sample_post(client: Any, site: Any, **kw: str) -> Any:
    data = {"site": site.code, "taken_from": "source"} | lab() | kw
    return client.post(reverse("intake:sample"), data)


def test_counts_per_ml_give_the_iso_4406_code(as_manager: Any, site: Any, unit: Any) -> None:
    response = sample_post(
        as_manager,
        site,
        taken_from="unit",
        unit="N-001",
        count_4_per_ml="4000",
        count_6_per_ml="1000",
        count_14_per_ml="60",
        total_contamination_mg_kg="18",
        appearance="clear and bright",
        microbial="ASTM D7687: 120 pg/mL cATP",
        report_ref="R-2026-114",
    )
    assert response.status_code == 302
    (s,) = FuelSample.objects.all()
    assert (s.unit, s.source) == (unit, None)
    assert s.iso4406 == "19/17/13"  # ISO 4406:2021 Table 1
    assert (s.total_contamination_mg_kg, s.report_ref) == (18.0, "R-2026-114")


@pytest.mark.parametrize(
    ("code", "reason"),
    [
        ("18/16", "expected three scale numbers"),
        ("19/17/14/extra", "got 4"),
        ("16/18/13", "cannot have more particles"),
    ],
)
def test_iso_codes_that_cannot_be_are_refused(
    as_manager: Any, site: Any, tank: Any, code: str, reason: str
) -> None:
    response = sample_post(as_manager, site, source=str(tank.pk), iso4406=code)
    assert reason in response.content.decode()
    assert not FuelSample.objects.exists()


def test_a_sample_is_tied_to_what_was_chosen(
    as_manager: Any, site: Any, tank: Any, other_site: Any
) -> None:
    page = sample_post(as_manager, site, water_mg_kg="80").content.decode()
    assert "Choose the fuel source." in page
    elsewhere = f.source_make(name="South tank", site=other_site)
    page = sample_post(as_manager, site, source=str(elsewhere.pk), water_mg_kg="80").content
    assert b"Select a valid choice" in page
    assert sample_post(as_manager, site, source=str(tank.pk)).status_code == 200  # no result
    assert sample_post(as_manager, site, source=str(tank.pk), water_mg_kg="80").status_code == 302
    page = sample_post(as_manager, site, source=str(tank.pk), water_mg_kg="80").content.decode()
    assert "already exists" in page  # the same reference twice
    assert FuelSample.objects.count() == 1


def event_post(client: Any, site: Any, **kw: str) -> Any:
    data = {"site": site.code, "unit": "N-001", "occurred_at": AT, "fmi": "7"}
    data |= {"occurrences": "2", "kind": "other", "hours": "1234.5"} | kw
    return client.post(reverse("intake:event"), data)


def test_engine_events_keep_proprietary_spns_as_given(
    as_manager: Any, site: Any, unit: Any
) -> None:
    assert event_post(as_manager, site, spn="523001").status_code == 302  # above 520,191
    (event,) = EngineEvent.objects.all()
    assert (event.spn, event.fmi, event.occurrences, event.hours) == (523_001, 7, 2, 1_234.5)
    page = event_post(as_manager, site, spn="524288").content.decode()  # beyond 19 bits
    assert "less than or equal to 524287" in page
    page = event_post(as_manager, site, spn="97", fmi="32").content.decode()
    assert "less than or equal to 31" in page
    assert EngineEvent.objects.count() == 1


def test_every_entry_page_is_a_managers_page(client: Any, mechanic: Any, auditor: Any) -> None:
    for user in (mechanic, auditor):
        client.force_login(user)
        for name in ("home", "hours", "fuel", "delivery", "sample", "event"):
            assert client.get(reverse(f"intake:{name}")).status_code == 403


def test_a_sample_tied_to_a_delivery_takes_its_source(
    as_manager: Any, site: Any, tank: Any
) -> None:
    delivery = Delivery.objects.create(
        source=tank, delivered_at=f.at(3, now=f.NOW), litres=8_000, ticket="T-1"
    )
    response = sample_post(
        as_manager, site, taken_from="delivery", delivery=str(delivery.pk), water_mg_kg="150"
    )
    assert response.status_code == 302
    (s,) = FuelSample.objects.all()
    assert (s.delivery, s.source, s.unit) == (delivery, tank, None)


def test_a_nul_byte_in_any_text_is_a_field_error(as_manager: Any, site: Any, tank: Any) -> None:
    data = {"site": site.code, "source": str(tank.pk), "delivered_at": AT, "amount": "900"}
    page = as_manager.post(reverse("intake:delivery"), data | {"ticket": "T\x001"}).content
    assert b"Null characters are not allowed." in page
    page = sample_post(as_manager, site, source=str(tank.pk), water_mg_kg="80", lab="A\x00B")
    assert b"Null characters are not allowed." in page.content
    assert not Delivery.objects.exists() and not FuelSample.objects.exists()


def test_a_manager_of_two_depots_picks_one(
    as_manager: Any, site: Any, other_site: Any, unit: Any, unit_class: Any
) -> None:
    f.unit_make(site=other_site, unit_class=unit_class, fleet_number="S-001")
    page = as_manager.get(reverse("intake:fuel"), {"site": other_site.code}).content.decode()
    assert "Fuelings · South Depot" in page and '<option value="S-001">' in page
    assert '<option value="N-001">' not in page
    assert '<option value="north">North Depot</option>' in page  # the depot picker


@pytest.mark.parametrize("n", [2, 9])
def test_entry_pages_queries_do_not_grow_with_the_depot(
    as_manager: Any, site: Any, unit_class: Any, tank: Any, django_assert_num_queries: Any, n: int
) -> None:
    for i in range(n):
        unit = f.unit_make(site=site, unit_class=unit_class, fleet_number=f"Q-{i}")
        Fueling.objects.create(unit=unit, source=tank, fueled_at=f.at(1, now=f.NOW), litres=90)
    # 1 session, 2 user, 3 role, 4 the manager's sites, 5 the latest fuelings with unit
    # and source, 6 the fleet numbers for the suggestions, 7 the fuel sources (the select).
    with django_assert_num_queries(7):
        page = as_manager.get(reverse("intake:fuel"), {"site": site.code}).content.decode()
    assert page.count("<td>Q-") == min(n, 8)
