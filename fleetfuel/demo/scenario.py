"""The invented demo scenario: its classes, depots and fixed numbers."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, date, datetime, time

DEMO_PASSWORD = "fleetfuel-demo"
SEED = 4406
HISTORY_DAYS = 450


@dataclass(frozen=True)
class ClassSpec:
    name: str
    hours_per_day: float
    burn_l_per_h: float
    cylinders: int
    make: str
    model: str
    works_weekends: bool


CLASSES = {
    "hauler": ClassSpec("Articulated hauler", 9.0, 24.0, 6, "Brackwater", "AH-30", False),
    "loader": ClassSpec("Wheel loader", 7.5, 17.0, 6, "Brackwater", "WL-220", False),
    "excavator": ClassSpec("Tracked excavator", 6.5, 15.0, 6, "Orrin", "TX-35", False),
    "genset": ClassSpec("Generator set", 15.0, 38.0, 12, "Selby Power", "G-500", True),
    "workboat": ClassSpec("Workboat", 5.0, 42.0, 8, "Tidewright", "WB-16", True),
}

SITES = [
    # name, code, tz, units system, fuel source, {class: count}
    (
        "Kestrel Quarry",
        "kestrel",
        "Europe/London",
        "metric",
        "Kestrel bulk tank",
        {"hauler": 8, "loader": 4, "excavator": 3, "genset": 2},
    ),
    (
        "Mill Lane Depot",
        "mill-lane",
        "Europe/London",
        "metric",
        "Mill Lane bulk tank",
        {"hauler": 6, "loader": 3, "excavator": 3, "genset": 2},
    ),
    (
        "Saltmarsh Wharf",
        "saltmarsh",
        "Europe/London",
        "metric",
        "Wharf bowser",
        {"workboat": 2, "genset": 2, "loader": 2},
    ),
    (
        "Cedar Flats Yard",
        "cedar-flats",
        "America/Chicago",
        "us",
        "Retail fuel card",
        {"hauler": 5, "loader": 3, "excavator": 2, "genset": 1},
    ),
]

PREFIX = {"kestrel": "KQ", "mill-lane": "ML", "saltmarsh": "SW", "cedar-flats": "CF"}
CLASS_LETTER = {"hauler": "H", "loader": "L", "excavator": "X", "genset": "G", "workboat": "B"}


def at_utc(day: date, hour: int, minute: int = 0) -> datetime:
    return datetime.combine(day, time(hour, minute), tzinfo=UTC)


# Invented part numbers of the demo's parts supplier.
PART_NUMBERS = {
    "primary_filter": "HV-PF10",
    "fine_filter": "HV-FF04",
    "lift_pump": "HV-LIF1",
    "low_pressure_pump": "HV-LOW1",
    "metering_actuator": "HV-MET1",
    "high_pressure_pump": "HV-HIG1",
    "rail": "HV-RAI1",
    "relief_valve": "HV-REL1",
    "injector": "HV-INJ7",
    "hp_connector": "HV-HPC2",
    "drain_check_valve": "HV-DRA1",
}
