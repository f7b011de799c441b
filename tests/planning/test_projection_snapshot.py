"""The projection of the demo at two fixed instants is exactly the stored one: every field of
every due item and unit flag, explanations included.

The snapshots were written by the engine as it stood before its inputs were loaded as plain
rows (tuples instead of model instances) and its rows upserted only when changed: a speed-up
must not change a word of the output. A change meant to change the projection rewrites them
(``PROJECTION_SNAPSHOT_WRITE=1``) and says so in its commit.
"""

from __future__ import annotations

import os
from typing import Any

import pytest

from fleetfuel.demo.actions import demo_seed
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem
from tests.planning.projection_snapshot import (
    INSTANTS,
    projection_dump,
    snapshot_read,
    snapshot_write,
)

WRITE = os.environ.get("PROJECTION_SNAPSHOT_WRITE", "") == "1"


def _diff(expected: list[Any], got: list[Any]) -> str:
    for want, have in zip(expected, got, strict=False):
        if want != have:
            keys = sorted(k for k in {*want, *have} if want.get(k) != have.get(k))
            return f"first difference at {want.get('unit')}: " + ", ".join(
                f"{k}: {want.get(k)!r} != {have.get(k)!r}" for k in keys
            )
    return f"{len(expected)} rows expected, {len(got)} stored"


@pytest.mark.django_db
@pytest.mark.parametrize("name", list(INSTANTS))
def test_demo_projection_is_the_stored_one(name: str) -> None:
    now = INSTANTS[name]
    demo_seed(now=now)  # builds and projects the demo at ``now``
    got = projection_dump()
    if WRITE:
        snapshot_write(name, got)
    expected = snapshot_read(name)
    for kind in ("due_items", "flags"):
        assert got[kind] == expected[kind], _diff(expected[kind], got[kind])
    # A second recompute at the same instant changes nothing (the upsert is idempotent).
    ids = list(DueItem.objects.values_list("unit_id", flat=True).distinct())
    due_items_recompute(unit_ids=ids, now=now)
    assert projection_dump() == expected
