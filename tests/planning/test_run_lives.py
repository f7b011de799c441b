"""A full run works out each class's filter life once, at its start, from the whole class's
changes; its batches (one unit each here) project with that life, the one scipy fits to
the same changes, without reading the class's changes again."""

from __future__ import annotations

from typing import Any

import pytest
from django.db import connection
from django.test.utils import CaptureQueriesContext

from fleetfuel.planning.benchmark import synthetic_fleet_make, synthetic_history_make
from fleetfuel.planning.models import DueItem, ProjectionRun
from fleetfuel.planning.runs import batch_recompute, run_start
from tests import factories as f

stats = pytest.importorskip("scipy.stats")

NOW = f.NOW


def test_each_batch_projects_with_the_life_the_run_fitted_once(
    site: Any, unit_class: Any, mechanic: Any
) -> None:
    units = synthetic_fleet_make(site=site, unit_class=unit_class, n=4, prefix="RL")
    truth = synthetic_history_make(units=units, now=NOW, recorded_by=mechanic, days=240, seed=3)
    batch_ids = run_start(now=NOW, trigger="command", size=1, unit_ids=[u.pk for u in units])
    run = ProjectionRun.objects.get()
    stored = run.lives[f"{unit_class.pk}:fine_filter"]
    # The life scipy fits to the class's fine-filter changes (right-censored Weibull, B10).
    observations = [x for (_, kind), lives in truth.items() if kind == "fine_filter" for x in lives]
    data = stats.CensoredData.right_censored(
        [life for life, _ in observations], [not used_up for _, used_up in observations]
    )
    shape, _loc, scale = stats.weibull_min.fit(data, floc=0)
    b10 = stats.weibull_min.ppf(0.10, shape, scale=scale)
    assert stored["source"] == "fitted" and stored["hours"] == pytest.approx(b10, rel=5e-3)
    for batch_id in batch_ids:
        with CaptureQueriesContext(connection) as queries:
            batch_recompute(batch_id=batch_id, now=NOW)
        # No batch reads the class's filter changes (the run read them once, at its start).
        class_wide = [
            q["sql"]
            for q in queries.captured_queries
            if "filter_changed" in q["sql"] and '"unit_class_id" IN' in q["sql"]
        ]
        assert class_wide == []
    for unit in units:
        life = DueItem.objects.get(unit=unit, task="fine_filter").inputs["life"]
        assert life["source"] == "fitted" and life["hours"] == pytest.approx(stored["hours"])
    assert ProjectionRun.objects.get().finished_at == NOW
