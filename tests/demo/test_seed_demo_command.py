"""seed_demo's --now: an ISO 8601 instant with its time zone, or a clear refusal."""

from __future__ import annotations

from datetime import datetime
from io import StringIO
from typing import Any

import pytest
from django.core.management import CommandError, call_command

from fleetfuel.demo.actions import demo_seed
from fleetfuel.fleet.models import Site


@pytest.mark.parametrize(
    "value", ["yesterday", "2026-12-02", "2026-12-02T02:40:00", "2026-13-02T02:40:00Z"]
)
def test_seed_demo_refuses_a_now_that_is_not_an_instant(db: Any, value: str) -> None:
    with pytest.raises(CommandError, match=r"--now .* ISO 8601 instant with a time zone"):
        call_command("seed_demo", "--now", value, stdout=StringIO())
    assert not Site.objects.exists()


def test_demo_seed_refuses_a_naive_now(db: Any) -> None:
    with pytest.raises(ValueError, match="time zone"):
        demo_seed(now=datetime(2026, 12, 2, 2, 40))
    assert not Site.objects.exists()
