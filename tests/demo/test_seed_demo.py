from __future__ import annotations

from typing import Any

from django.apps import apps
from django.core.management import call_command

from fleetfuel.fleet.models import FuelSample, Site, Unit


def row_counts() -> dict[str, int]:
    return {
        m._meta.label: m.objects.count()
        for m in apps.get_models()
        if m._meta.app_label in {"fleet", "ledger", "workorders", "accounts", "planning"}
    }


def test_seed_demo_is_idempotent_and_matches_the_scenario(db: Any) -> None:
    call_command("seed_demo")
    first = row_counts()
    call_command("seed_demo")
    assert row_counts() == first
    assert Site.objects.count() == 4
    assert 40 <= Unit.objects.count() <= 60
    assert Unit.objects.values("unit_class").distinct().count() == 5
    # One water-contaminated delivery (EN 590 limit: 200 mg/kg) and one dirty one
    # (dirtier than the WWFC 6th ed. 18/16/13 at the >=4 um(c) channel).
    assert FuelSample.objects.filter(water_mg_kg__gt=200).count() == 1
    assert FuelSample.objects.filter(code_4__gt=18).exists()
    # The recompute ran on commit: every unit has its three tasks projected.
    assert first["planning.DueItem"] == 3 * Unit.objects.count()


def test_demo_contaminated_deliveries_lead_the_due_list(db: Any, client: Any) -> None:
    from django.contrib.auth.models import User
    from django.urls import reverse

    from fleetfuel.planning.models import DueItem

    call_command("seed_demo")
    # The dirty delivery (sample FS-D001 into the Kestrel tank) brings Kestrel's filters
    # forward on contaminant loading, and each explanation names the sample.
    kestrel = DueItem.objects.filter(site__code="kestrel", task="fine_filter")
    assert kestrel.filter(basis="contaminant_budget").count() >= kestrel.count() // 2
    for item in kestrel.filter(basis="contaminant_budget"):
        assert any("FS-D001" in line for line in item.explanation)
    # The wet delivery (FS-W001, 780 mg/kg against EN 590's 200) shows on Mill Lane's units.
    mill = DueItem.objects.filter(site__code="mill-lane")
    assert any("FS-W001" in line for item in mill for line in item.explanation)
    # The manager's home opens on them: the first page, sorted by due date, starts with them.
    client.force_login(User.objects.get(username="manager"))
    first = client.get(reverse("planning:due_list")).context["page"].items[:10]
    assert all(i.site.code in {"kestrel", "mill-lane"} for i in first)


def test_demo_ledger_verifies_against_its_checkpoints(db: Any) -> None:
    from io import StringIO

    call_command("seed_demo")
    out = StringIO()
    call_command("verify_ledger", stdout=out)
    # Every unit with history has a signed checkpoint of its head from the start.
    assert "48 unit chain(s)" in out.getvalue()
    assert "0 agree with their signed checkpoint" not in out.getvalue()
