"""The invented demo scenario: its classes, depots, fixed numbers and its clock."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timedelta

DEMO_PASSWORD = "fleetfuel-demo"
SEED = 4406
HISTORY_DAYS = 450
NOW_HOUR = 6  # on the demo's own clock, `now` is 06:00 of day 0
# Classes that do not work weekends rest two days in seven, counted back from `now` (not
# calendar weekends, so the demo built on any weekday is the same fleet).
REST_DAYS = (5, 6)  # days ago, modulo 7


@dataclass(frozen=True)
class ClassSpec:
    name: str
    hours_per_day: float
    burn_l_per_h: float
    cylinders: int
    make: str
    model: str
    works_weekends: bool
    tank_l: float  # the class's typical fuel tank: above its largest demo fueling


# Invented tanks: each holds the most the demo ever puts in at once (fuelled every one to three
# days: a hauler's largest is about 1,050 L, a loader's 650 L, an excavator's 450 L, a
# generator set's 2,400 L, a workboat's 880 L).
CLASSES = {
    "hauler": ClassSpec("Articulated hauler", 9.0, 24.0, 6, "Brackwater", "AH-30", False, 1100),
    "loader": ClassSpec("Wheel loader", 7.5, 17.0, 6, "Brackwater", "WL-220", False, 700),
    "excavator": ClassSpec("Tracked excavator", 6.5, 15.0, 6, "Orrin", "TX-35", False, 600),
    "genset": ClassSpec("Generator set", 15.0, 38.0, 12, "Selby Power", "G-500", True, 2500),
    "workboat": ClassSpec("Workboat", 5.0, 42.0, 8, "Tidewright", "WB-16", True, 1500),
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


def demo_time(*, now: datetime, days_ago: int, hour: int, minute: int = 0) -> datetime:
    """``hour:minute`` of the demo day ``days_ago`` days before ``now``, on the demo's clock
    (on which ``now`` is 06:00). Every record is laid back from ``now`` by a fixed span, so
    the demo built at any instant is the same fleet shifted in time: no calendar date,
    weekday or time of day changes what it shows."""
    return now + timedelta(days=-days_ago, hours=hour - NOW_HOUR, minutes=minute)


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
