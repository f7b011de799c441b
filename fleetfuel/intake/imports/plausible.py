"""Stand-ins with the signatures of fleetfuel.fleet.checks (the plausibility rule, on its way
from another branch). MeterReading.full_clean already refuses a meter going backwards and
Context.instant a time in the future; these add nothing until the real rule replaces them."""

from __future__ import annotations

from datetime import datetime

from fleetfuel.fleet.models import Unit


def meter_reading_refusal(
    *, unit: Unit, at: datetime, hours: float, now: datetime, exclude_pk: int | None = None
) -> str | None:
    return None


def fueling_refusal_for(*, unit: Unit, litres: float) -> str | None:
    return None
