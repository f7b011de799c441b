"""The registry: every kind of import, in the order a folder is imported (what a row refers
to comes before it). The export, the templates, the command and the docs all read this."""

from __future__ import annotations

from . import kinds_fleet, kinds_observations, kinds_records
from .kind import Layout

LAYOUTS: dict[str, Layout] = {
    layout.kind: layout
    for layout in (*kinds_fleet.LAYOUTS, *kinds_observations.LAYOUTS, *kinds_records.LAYOUTS)
}
# Deliveries come before samples (a sample may name the delivery it was taken from).
ORDER: tuple[str, ...] = (
    "units", "components", "meter_replacements", "readings", "fuelings", "deliveries",
    "samples", "engine_events", "filter_dp", "service_events",
)  # fmt: skip
assert set(ORDER) == set(LAYOUTS), "every layout has its place in ORDER"


def layout_for(*, kind: str) -> Layout:
    try:
        return LAYOUTS[kind]
    except KeyError:
        raise ValueError(f"unknown kind {kind!r}; one of: {', '.join(ORDER)}") from None


def kind_from_name(*, file_name: str) -> str | None:
    """The kind a file is named for (``readings.csv``, ``2026-readings.xlsx``), or None."""
    stem = file_name.rsplit(".", 1)[0].lower().replace("-", "_")
    matches = [k for k in ORDER if stem == k or stem.endswith("_" + k)]
    return matches[0] if len(matches) == 1 else None
