"""Unit flags from engine events, J1939 labels, raised priorities and water alarms."""

from __future__ import annotations

from datetime import datetime, timedelta

import pytest

from services.common import TaskKind
from services.flags import (
    J1939_FMI,
    EngineEvent,
    ReliefValvePlan,
    raised_priorities,
    relief_valve_plan,
    spn_label,
    unit_flags,
    water_event_since,
)

NOW = datetime(2026, 5, 20, 12, 0)


def event(
    kind: str,
    at: datetime,
    *,
    hours: float | None = None,
    spn: int = 5571,
    fmi: int = 31,
    count: int = 1,
) -> EngineEvent:
    return EngineEvent(at=at, hours=hours, spn=spn, fmi=fmi, count=count, kind=kind)


def opened(at: datetime, count: int = 1, hours: float | None = None) -> EngineEvent:
    return event("relief_valve_opened", at, hours=hours, count=count)


DAYS_PLAN = ReliefValvePlan(
    window_hours=None, window_days=30, openings_to_flag=3, lifetime_openings_to_replace=None
)
HOURS_PLAN = ReliefValvePlan(
    window_hours=100.0, window_days=None, openings_to_flag=3, lifetime_openings_to_replace=None
)


# ----------------------------------------------------------------- J1939 tables


def test_fmi_spot_checks() -> None:
    # FMI meanings: SAE J1939-73's FMI table, as reproduced in J1939 libraries' enums (e.g.
    # the CODESYS IoDrvJ1939 library's FMI enum: 0 "Data Valid But Above Normal Operational
    # Range (Most Severe Level)"); the SAE J1939 Digital Annex is the authority.
    assert J1939_FMI[0] == "above normal, most severe"
    assert J1939_FMI[1] == "below normal, most severe"
    assert J1939_FMI[5] == "current low / open circuit"
    assert J1939_FMI[7] == "mechanical not responding"
    assert J1939_FMI[31] == "condition exists"
    # 22-30 are reserved in SAE J1939-73 (from memory).
    assert not set(range(22, 31)) & J1939_FMI.keys()


def test_spn_labels_spot_checks() -> None:
    # SPN names: SAE J1939-71, as read in open-source J1939 SPN tables (the SAE J1939
    # Digital Annex is the authority).
    assert "fuel filter differential pressure" in spn_label(95)
    assert "suction side" in spn_label(16) and "suction side" in spn_label(1382)
    assert "water in fuel" in spn_label(97)
    assert "relief valve" in spn_label(5571)
    assert "rail 1 pressure" in spn_label(157)
    # Injector cylinder n is SPN 650 + n (651 cylinder 1 ... 658 cylinder 8; open J1939 enums).
    assert spn_label(651).endswith("injector cylinder 1")
    assert spn_label(658).endswith("injector cylinder 8")


def test_proprietary_spn_boundary() -> None:
    # SAE J1939-71 leaves SPNs 520,192 to 524,287 to manufacturers (proprietary; from memory).
    assert "proprietary" not in spn_label(520_191)
    assert spn_label(520_192) == "proprietary SPN 520192 (not interpreted)"


# ----------------------------------------------------------------- relief valve flags


def test_day_window_edge_is_inside() -> None:
    # Three openings, the oldest exactly 30 days before now: inside the window.
    events = [opened(NOW - timedelta(days=30)), opened(NOW - timedelta(days=2), count=2)]
    flags = unit_flags(events=events, relief_plan=DAYS_PLAN, lifetime_relief_openings=3, now=NOW)
    assert [f.code for f in flags] == ["relief_valve_repeat"]
    assert flags[0].since == NOW - timedelta(days=30)
    assert "3 relief-valve openings in the last 30 days" in flags[0].reason


def test_day_window_just_outside_does_not_count() -> None:
    events = [
        opened(NOW - timedelta(days=30, seconds=1)),
        opened(NOW - timedelta(days=2), count=2),
    ]
    flags = unit_flags(events=events, relief_plan=DAYS_PLAN, lifetime_relief_openings=3, now=NOW)
    assert flags == []


def test_future_events_are_refused_naming_the_field() -> None:
    events = [opened(NOW + timedelta(hours=1), count=5)]
    with pytest.raises(ValueError, match="engine event occurred_at is after now"):
        unit_flags(events=events, relief_plan=DAYS_PLAN, lifetime_relief_openings=5, now=NOW)


def test_hour_window_edges() -> None:
    # Window 100 h ending at the unit's current hours (2,000 h): 1,900 h is inside, 1,899.9 out.
    inside = [opened(NOW - timedelta(days=9), hours=1_900.0), opened(NOW, count=2, hours=2_000.0)]
    outside = [opened(NOW - timedelta(days=9), hours=1_899.9), opened(NOW, count=2, hours=2_000.0)]
    kw = {"relief_plan": HOURS_PLAN, "lifetime_relief_openings": 0, "now": NOW}
    assert len(unit_flags(events=inside, current_hours=2_000.0, **kw)) == 1  # type: ignore[arg-type]
    assert unit_flags(events=outside, current_hours=2_000.0, **kw) == []  # type: ignore[arg-type]
    # The unit has run on since: at 2,050 h the window starts at 1,950 h, and the openings
    # no longer flag it (the window never ends at the last event).
    assert unit_flags(events=inside, current_hours=2_050.0, **kw) == []  # type: ignore[arg-type]
    # Hours unknown: no hour window at all.
    assert unit_flags(events=inside, **kw) == []  # type: ignore[arg-type]


def test_either_window_triggers_when_both_are_set() -> None:
    both = ReliefValvePlan(
        window_hours=10.0, window_days=30, openings_to_flag=3, lifetime_openings_to_replace=None
    )
    # Spread over 50 h (hour window misses) but within 30 days (day window hits).
    events = [opened(NOW - timedelta(days=d), hours=2_000.0 - 10 * d) for d in (1, 3, 5)]
    flags = unit_flags(
        events=events, relief_plan=both, lifetime_relief_openings=3, now=NOW, current_hours=2_000.0
    )
    assert [f.code for f in flags] == ["relief_valve_repeat"]
    assert "30 days" in flags[0].reason and "engine hours" not in flags[0].reason
    # Both windows hit: still one reason, one sentence (the other window named within it).
    close = [opened(NOW - timedelta(days=d), hours=2_000.0 - d) for d in (1, 3, 5)]
    (flag,) = unit_flags(
        events=close, relief_plan=both, lifetime_relief_openings=3, now=NOW, current_hours=2_000.0
    )
    assert flag.reason.count(".") == 1 and flag.reason.count("relief-valve openings") == 1
    assert "also 3 in the last 10 engine hours" in flag.reason


def test_relief_flag_checks_in_order() -> None:
    # common practice: a normally open metering actuator that loses its signal passes
    # maximum flow and drives rail pressure to the relief valve, so its circuit comes
    # first, then the rail pressure sensor, then the valve.
    events = [opened(NOW - timedelta(days=1), count=3)]
    (flag,) = unit_flags(events=events, relief_plan=DAYS_PLAN, lifetime_relief_openings=3, now=NOW)
    assert "metering actuator" in flag.checks[0]
    assert "rail pressure sensor" in flag.checks[1]
    assert "relief valve itself" in flag.checks[2]
    assert flag.high_pressure is True
    assert any("manufacturer's service documentation" in c for c in flag.checks)


def test_lifetime_openings_flag_replacement() -> None:
    plan = ReliefValvePlan(
        window_hours=None, window_days=30, openings_to_flag=3, lifetime_openings_to_replace=50
    )
    below = unit_flags(events=[], relief_plan=plan, lifetime_relief_openings=49, now=NOW)
    at = unit_flags(events=[], relief_plan=plan, lifetime_relief_openings=50, now=NOW)
    assert below == []
    assert [f.code for f in at] == ["relief_valve_life"]
    assert "50 times" in at[0].reason
    assert (
        "Replace" in at[0].checks[0] and "manufacturer's service documentation" in at[0].checks[0]
    )


def test_pumping_imbalance_checks_supply_side_first() -> None:
    events = [event("pumping_imbalance", NOW - timedelta(days=3), spn=1347, fmi=7)]
    (flag,) = unit_flags(events=events, relief_plan=DAYS_PLAN, lifetime_relief_openings=0, now=NOW)
    assert flag.code == "pumping_imbalance"
    assert "filter" in flag.checks[0]
    assert "supply pressure" in flag.checks[1]
    assert "pump per the manufacturer's procedure" in flag.checks[2]
    assert "fuel pump pressurizing assembly 1" in flag.reason


# ----------------------------------------------------------------- priorities and water


def test_raised_priorities_by_spn() -> None:
    since = NOW - timedelta(days=10)
    at = NOW - timedelta(days=1)
    assert raised_priorities(events=[event("filter_dp_high", at, spn=95)], since=since) == {
        TaskKind.FINE_FILTER
    }
    for spn in (16, 1382):
        assert raised_priorities(events=[event("filter_dp_high", at, spn=spn)], since=since) == {
            TaskKind.PRIMARY_FILTER
        }
    assert raised_priorities(events=[event("supply_pressure_low", at, spn=94)], since=since) == {
        TaskKind.PRIMARY_FILTER
    }
    before = NOW - timedelta(days=11)
    assert raised_priorities(events=[event("filter_dp_high", before, spn=95)], since=since) == set()
    assert raised_priorities(events=[event("other", at, spn=95)], since=since) == set()


def test_water_event_since() -> None:
    wif = event("water_in_fuel", NOW - timedelta(days=2), spn=97)
    assert water_event_since(events=[wif], since=NOW - timedelta(days=3)) is True
    assert water_event_since(events=[wif], since=NOW - timedelta(days=1)) is False


# ----------------------------------------------------------------- plan defaults


def test_a_plan_without_relief_thresholds_flags_three_openings_in_a_week() -> None:
    # No standard sets these (common practice); they apply only where the plan is silent.
    plan = relief_valve_plan(
        window_hours=None,
        window_days=None,
        openings_to_flag=None,
        lifetime_openings_to_replace=None,
    )
    week = [opened(NOW - timedelta(days=d)) for d in (0, 3, 7)]
    spread = [opened(NOW - timedelta(days=d)) for d in (3, 7, 8)]  # the 8th day is outside
    two = [opened(NOW - timedelta(days=d)) for d in (1, 2)]
    kw = {"relief_plan": plan, "lifetime_relief_openings": 0, "now": NOW}
    assert [f.code for f in unit_flags(events=week, **kw)] == ["relief_valve_repeat"]  # type: ignore[arg-type]
    assert unit_flags(events=spread, **kw) == []  # type: ignore[arg-type]
    assert unit_flags(events=two, **kw) == []  # type: ignore[arg-type]
    # No lifetime limit: however often it has opened, the valve is not flagged for its age.
    assert unit_flags(events=[], relief_plan=plan, lifetime_relief_openings=10_000, now=NOW) == []


def test_a_plan_keeps_its_own_window_and_count() -> None:
    hours_only = relief_valve_plan(
        window_hours=100.0, window_days=None, openings_to_flag=5, lifetime_openings_to_replace=40
    )
    assert hours_only == ReliefValvePlan(
        window_hours=100.0, window_days=None, openings_to_flag=5, lifetime_openings_to_replace=40
    )
    # Three openings in a day: below the plan's five, and no day window is added.
    events = [opened(NOW - timedelta(hours=h), hours=2_000.0 - h) for h in (1, 2, 3)]
    assert (
        unit_flags(events=events, relief_plan=hours_only, lifetime_relief_openings=3, now=NOW) == []
    )
    # A count of 0 would flag every unit: it is read as "not set".
    zero = relief_valve_plan(
        window_hours=None, window_days=30, openings_to_flag=0, lifetime_openings_to_replace=None
    )
    one = [opened(NOW - timedelta(days=1))]
    assert unit_flags(events=one, relief_plan=zero, lifetime_relief_openings=1, now=NOW) == []


def test_high_pressure_flags_are_marked_so_pages_show_the_caution() -> None:
    # The checks of all three flags touch the rail, its valve or the high-pressure pump.
    plan = ReliefValvePlan(
        window_hours=None, window_days=30, openings_to_flag=3, lifetime_openings_to_replace=3
    )
    events = [opened(NOW - timedelta(days=1), count=3)]
    events.append(event("pumping_imbalance", NOW - timedelta(days=1), spn=1347, fmi=7))
    flags = unit_flags(events=events, relief_plan=plan, lifetime_relief_openings=3, now=NOW)
    assert [f.code for f in flags] == [
        "relief_valve_repeat",
        "relief_valve_life",
        "pumping_imbalance",
    ]
    assert all(f.high_pressure for f in flags)


def test_openings_before_the_valve_was_replaced_do_not_count() -> None:
    # common practice: a new valve starts a new count. Five openings two days ago, the valve
    # replaced yesterday: neither the repeat flag nor the life flag stays.
    plan = ReliefValvePlan(
        window_hours=None, window_days=30, openings_to_flag=3, lifetime_openings_to_replace=5
    )
    events = [opened(NOW - timedelta(days=2), count=5)]
    kw = {"events": events, "relief_plan": plan, "now": NOW}
    before = unit_flags(lifetime_relief_openings=5, **kw)  # type: ignore[arg-type]
    assert [f.code for f in before] == ["relief_valve_repeat", "relief_valve_life"]
    replaced = NOW - timedelta(days=1)
    # The caller counts the lifetime openings since the replacement: 0.
    after = unit_flags(lifetime_relief_openings=0, valve_replaced_at=replaced, **kw)  # type: ignore[arg-type]
    assert after == []
    # Openings on the new valve count again, and the life flag says since when.
    new = [*events, opened(NOW - timedelta(hours=3), count=5)]
    flags = unit_flags(
        events=new,
        relief_plan=plan,
        now=NOW,
        lifetime_relief_openings=5,
        valve_replaced_at=replaced,
    )
    assert [f.code for f in flags] == ["relief_valve_repeat", "relief_valve_life"]
    assert flags[0].reason.startswith("5 relief-valve openings")
    assert f"since it was fitted on {replaced:%Y-%m-%d}" in flags[1].reason


@pytest.mark.parametrize(
    ("field", "kwargs"),
    [
        ("engine event hours", {"hours": float("nan")}),
        ("engine event hours", {"hours": float("inf")}),
        ("engine event count", {"count": -1}),
        ("engine event fmi", {"fmi": 32}),
    ],
)
def test_bad_engine_events_are_refused_naming_the_field(
    field: str, kwargs: dict[str, object]
) -> None:
    # SAE J1939-73: the FMI is a 5-bit field (0 to 31); counts and hours cannot be negative.
    base: dict[str, object] = {"at": NOW, "hours": 10.0, "spn": 5571, "fmi": 31, "count": 1}
    with pytest.raises(ValueError, match=field):
        EngineEvent(kind="relief_valve_opened", **{**base, **kwargs})  # type: ignore[arg-type]
