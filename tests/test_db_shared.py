"""db_shared: data built once for a module's tests, each test starting from it, none after."""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

import pytest

from fleetfuel.fleet.models import Site
from tests import factories as f
from tests.conftest import db_shared


@pytest.fixture(scope="module")
def depots(django_db_setup: Any, django_db_blocker: Any) -> Iterator[list[str]]:
    with db_shared(django_db_blocker):
        yield [f.site_make(code="shared-a").code, f.site_make(code="shared-b").code]
    with django_db_blocker.unblock():
        # Rolled back when the module's tests are done: no other test sees these sites.
        assert not Site.objects.filter(code__startswith="shared-").exists()


@pytest.mark.parametrize("round", [1, 2])
def test_each_test_starts_from_the_shared_data(depots: list[str], db: Any, round: int) -> None:
    # What one test adds is rolled back before the next: both rounds see the same two sites.
    assert sorted(Site.objects.values_list("code", flat=True)) == depots
    f.site_make(code=f"added-{round}")
