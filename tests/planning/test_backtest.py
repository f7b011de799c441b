"""`manage.py backtest`: the engine's projection at each previous change against what was
achieved, beside the fixed plan, on the demo and on a synthetic fleet.

The synthetic fleet's element lives are drawn from a known Weibull distribution (invented
data), so what the backtest must find is known outside the engine: the hours achieved, and
the plan's errors. The medians are checked with Python's ``statistics.median``; the life the
engine fits is checked against scipy.stats (``CensoredData`` and ``weibull_min.fit``).
"""

from __future__ import annotations

import json
import statistics
from datetime import UTC, datetime
from io import StringIO
from typing import Any

import pytest
from django.core.management import call_command
from django.core.management.base import CommandError

from fleetfuel.demo.actions import demo_seed
from fleetfuel.fleet.models import ComponentKind
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.backtest import backtest_run
from fleetfuel.planning.benchmark import synthetic_fleet_make, synthetic_history_make
from fleetfuel.planning.models import DueItem
from tests import factories as f

stats = pytest.importorskip("scipy.stats")

NOW = f.NOW
DEMO_NOW = datetime(2026, 12, 2, 2, 40, tzinfo=UTC)


@pytest.fixture
def synthetic(site: Any, unit_class: Any, mechanic: Any) -> dict[str, Any]:
    units = synthetic_fleet_make(site=site, unit_class=unit_class, n=4, prefix="SY")
    truth = synthetic_history_make(units=units, now=NOW, recorded_by=mechanic, days=240, seed=3)
    return {"units": units, "truth": truth}


def test_backtest_on_a_synthetic_fleet_finds_the_lives_drawn(synthetic: dict[str, Any]) -> None:
    truth = synthetic["truth"]
    summary = backtest_run(unit_ids=[u.pk for u in synthetic["units"]])
    assert summary.left_out == []
    lives = [life for key in sorted(truth) for life, _ in truth[key]]
    assert summary.changes == len(lives) == len(summary.rows)
    achieved = sorted(r.achieved_hours for r in summary.rows)
    assert achieved == pytest.approx(sorted(lives), abs=1e-6)
    # The plan (tests/factories.plans_make: 500 h for both filters) scored independently.
    assert summary.plan_median_error == pytest.approx(
        statistics.median(abs(500 - x) for x in lives), abs=1e-6
    )
    assert summary.engine_median_error == pytest.approx(
        statistics.median(r.engine_error for r in summary.rows if r.engine_error is not None)
    )
    # Early replays have the plan's estimate only; later ones have 5+ used-up elements in
    # the class's history and project the fitted B10 life, shorter than the plan's 500 h.
    assert summary.rows and any(
        r.projected_hours is not None and r.projected_hours < 400 for r in summary.rows
    )
    assert summary.engine_late < summary.plan_late


def test_the_engine_uses_the_fitted_life_and_says_so(synthetic: dict[str, Any]) -> None:
    truth, units = synthetic["truth"], synthetic["units"]
    due_items_recompute(unit_ids=[u.pk for u in units], now=NOW)
    item = DueItem.objects.get(unit=units[0], task="fine_filter")
    observations = [x for (_, kind), lives in truth.items() if kind == "fine_filter" for x in lives]
    data = stats.CensoredData.right_censored(
        [life for life, _ in observations], [not used_up for _, used_up in observations]
    )
    shape, _loc, scale = stats.weibull_min.fit(data, floc=0)
    b10 = stats.weibull_min.ppf(0.10, shape, scale=scale)
    life = item.inputs["life"]
    assert life["source"] == "fitted" and life["changes"] == len(observations)
    assert life["hours"] == pytest.approx(b10, rel=5e-3)
    events = sum(used_up for _, used_up in observations)
    assert any(
        f"calibrated from {len(observations)} recorded changes" in line
        and f"({events} used up at the dP limit)" in line
        for line in item.explanation
    )


def test_without_used_up_elements_the_plan_estimate_is_shown_as_such(
    site: Any, unit_class: Any
) -> None:
    unit = f.unit_make(site=site, unit_class=unit_class)
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    item = DueItem.objects.get(unit=unit, task="primary_filter")
    assert item.inputs["life"]["source"] == "plan"
    assert any("the plan's estimate (500 h" in line for line in item.explanation)


def test_backtest_command_on_the_demo_reports_both_errors(db: Any) -> None:
    demo_seed(now=DEMO_NOW)
    out = StringIO()
    # One depot (the demo's largest) keeps the suite quick; the command reads any selection.
    call_command("backtest", "--site", "kestrel", "--json", stdout=out)
    got = json.loads(out.getvalue())
    # Every pair of consecutive recorded changes of one filter on one unit is scored.
    pairs = 0
    for kind in (ComponentKind.PRIMARY_FILTER, ComponentKind.FINE_FILTER):
        for unit_id in set(
            ServiceEvent.objects.filter(
                kind="filter_changed", component_kind=kind, unit__site__code="kestrel"
            ).values_list("unit_id", flat=True)
        ):
            n = ServiceEvent.objects.filter(
                kind="filter_changed", component_kind=kind, unit_id=unit_id
            ).count()
            pairs += n - 1
    assert pairs > 0 and got["changes"] + len(got["left_out"]) == pairs
    rows = got["rows"]
    assert got["plan_median_abs_error_hours"] == pytest.approx(
        statistics.median(r["plan_error"] for r in rows if r["engine_error"] is not None)
    )
    assert got["engine_median_abs_error_hours"] == pytest.approx(
        statistics.median(r["engine_error"] for r in rows if r["engine_error"] is not None)
    )
    text = StringIO()
    call_command("backtest", "--site", "saltmarsh", stdout=text)
    lines = text.getvalue().splitlines()
    assert any(line.startswith("Median absolute error, engine projection: ") for line in lines)
    assert any(line.startswith("Median absolute error, fixed plan interval: ") for line in lines)
    assert any(line.startswith("Changes scored: ") for line in lines)


def test_backtest_refuses_an_unknown_site(db: Any) -> None:
    with pytest.raises(CommandError, match="No site"):
        call_command("backtest", "--site", "nowhere", stdout=StringIO())
