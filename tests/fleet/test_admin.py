"""The admin is the manager's door for the fleet's data: field-level errors, nothing half-saved."""

from __future__ import annotations

from typing import Any

from django.urls import reverse

from fleetfuel.fleet.models import Fueling, FuelSample, MeterReading
from tests import factories as f


def staff_manager() -> Any:
    user = f.user_make("manager")
    user.is_staff = True
    user.save()
    return user


def test_manager_records_a_sample_and_gets_field_errors(client: Any, db: Any) -> None:
    client.force_login(staff_manager())
    source = f.source_make(name="Bulk A")
    url = reverse("admin:fleet_fuelsample_add")
    data = {
        "reference": "LAB-9",
        "source": source.pk,
        "sampled_at_0": "2026-11-02",
        "sampled_at_1": "09:00",
        "iso4406": "18/16",
        "lab_method": "",
    }
    response = client.post(url, data)
    assert response.status_code == 200  # the form again, with the error on the field
    assert "expected three scale numbers separated by &#x27;/&#x27;, got 2" in (
        response.content.decode()
    )
    assert not FuelSample.objects.exists()
    data["iso4406"] = "19/17/14"
    assert client.post(url, data).status_code == 302
    assert FuelSample.objects.get().code_14 == 14


def test_meter_reading_going_backwards_is_refused_in_the_admin(client: Any, unit: Any) -> None:
    client.force_login(staff_manager())
    url = reverse("admin:fleet_meterreading_add")
    base = {"unit": unit.pk, "source": "manual", "taken_at_0": "2026-11-01", "taken_at_1": "08:00"}
    assert client.post(url, {**base, "hours": "1500"}).status_code == 302
    later = {**base, "taken_at_0": "2026-11-02", "hours": "1400"}
    response = client.post(url, later)
    assert "lower than the previous reading" in response.content.decode()
    assert MeterReading.objects.count() == 1


def test_service_history_and_closing_are_not_editable_in_the_admin(client: Any, db: Any) -> None:
    client.force_login(staff_manager())
    assert client.get(reverse("admin:ledger_serviceevent_add")).status_code == 403
    assert client.get(reverse("admin:fleet_unit_add")).status_code == 200


def test_fueling_beyond_the_tank_is_refused_in_the_admin(client: Any, unit: Any) -> None:
    # The same plausibility rule as the entry pages (services/plausibility.fueling_refusal):
    # a fueling cannot exceed the unit's tank by more than the margin.
    unit.tank_capacity_l = 500
    unit.save()
    client.force_login(staff_manager())
    url = reverse("admin:fleet_fueling_add")
    base = {"unit": unit.pk, "fueled_at_0": "2026-11-01", "fueled_at_1": "08:00"}
    response = client.post(url, {**base, "litres": "2000"})
    assert response.status_code == 200
    assert "500" in response.content.decode()
    assert not Fueling.objects.exists()
    assert client.post(url, {**base, "litres": "450"}).status_code == 302
    assert Fueling.objects.get().litres == 450


def test_the_records_pages_wear_fleetfuels_name(client: Any, db: Any) -> None:
    client.force_login(staff_manager())
    page = client.get(reverse("admin:index")).content.decode()
    assert "fleetfuel · fleet records" in page
    assert "Django administration" not in page
