"""Unit flags from engine events, J1939 labels, and the rules for closing a work order."""

from __future__ import annotations

from datetime import datetime, timedelta

import pytest
from hypothesis import given
from hypothesis import strategies as st

from services.common import TaskKind
from services.rules import (
    J1939_FMI,
    ClosedTask,
    EngineEvent,
    ReliefValvePlan,
    RuleViolation,
    close_violations,
    cylinder_exists,
    follow_ups,
    measurement_breach,
    measurement_passed,
    override_allowed,
    override_permitted,
    raised_priorities,
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
    # FMI meanings: SAE J1939-73 FMI table as listed in DOMAIN.md ("SAE J1939 codes").
    assert J1939_FMI[0] == "above normal, most severe"
    assert J1939_FMI[1] == "below normal, most severe"
    assert J1939_FMI[5] == "current low / open circuit"
    assert J1939_FMI[7] == "mechanical not responding"
    assert J1939_FMI[31] == "condition exists"
    # 22-30 are not listed in DOMAIN.md (reserved, from memory).
    assert not set(range(22, 31)) & J1939_FMI.keys()


def test_spn_labels_spot_checks() -> None:
    # SPNs: SAE J1939-71 as read in open-source J1939 enums (DOMAIN.md).
    assert "fuel filter differential pressure" in spn_label(95)
    assert "suction side" in spn_label(16) and "suction side" in spn_label(1382)
    assert "water in fuel" in spn_label(97)
    assert "relief valve" in spn_label(5571)
    assert "rail 1 pressure" in spn_label(157)
    # Injector cylinder n is SPN 650 + n (651 cylinder 1 ... 658 cylinder 8; open J1939 enums).
    assert spn_label(651).endswith("injector cylinder 1")
    assert spn_label(658).endswith("injector cylinder 8")


def test_proprietary_spn_boundary() -> None:
    # DOMAIN.md: SPNs above 520,191 are manufacturer-proprietary.
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


def test_future_events_are_ignored() -> None:
    events = [opened(NOW + timedelta(hours=1), count=5)]
    assert (
        unit_flags(events=events, relief_plan=DAYS_PLAN, lifetime_relief_openings=5, now=NOW) == []
    )


def test_hour_window_edges() -> None:
    # Window 100 h ending at the latest event (2,000 h): 1,900 h is inside, 1,899.9 out.
    inside = [opened(NOW - timedelta(days=9), hours=1_900.0), opened(NOW, count=2, hours=2_000.0)]
    outside = [opened(NOW - timedelta(days=9), hours=1_899.9), opened(NOW, count=2, hours=2_000.0)]
    kw = {"relief_plan": HOURS_PLAN, "lifetime_relief_openings": 0, "now": NOW}
    assert len(unit_flags(events=inside, **kw)) == 1  # type: ignore[arg-type]
    assert unit_flags(events=outside, **kw) == []  # type: ignore[arg-type]
    # With current hours given, the window ends there instead: 2,050 h -> starts 1,950 h.
    assert unit_flags(events=inside, current_hours=2_050.0, **kw) == []  # type: ignore[arg-type]


def test_either_window_triggers_when_both_are_set() -> None:
    both = ReliefValvePlan(
        window_hours=10.0, window_days=30, openings_to_flag=3, lifetime_openings_to_replace=None
    )
    # Spread over 50 h (hour window misses) but within 30 days (day window hits).
    events = [opened(NOW - timedelta(days=d), hours=2_000.0 - 10 * d) for d in (1, 3, 5)]
    flags = unit_flags(events=events, relief_plan=both, lifetime_relief_openings=3, now=NOW)
    assert [f.code for f in flags] == ["relief_valve_repeat"]
    assert "30 days" in flags[0].reason and "engine hours" not in flags[0].reason


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
    assert at[0].high_pressure is True  # the page shows the high-pressure caution beside it


def test_pumping_imbalance_checks_supply_side_first() -> None:
    events = [event("pumping_imbalance", NOW - timedelta(days=3), spn=1347, fmi=7)]
    (flag,) = unit_flags(events=events, relief_plan=DAYS_PLAN, lifetime_relief_openings=0, now=NOW)
    assert flag.code == "pumping_imbalance"
    assert "filter" in flag.checks[0]
    assert "supply pressure" in flag.checks[1]
    assert "pump per the manufacturer's procedure" in flag.checks[2]
    assert "fuel pump pressurizing assembly 1" in flag.reason
    assert flag.high_pressure is True


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


# ----------------------------------------------------------------- closing rules


def task(kind: str, cylinder: int | None = None, label: str = "") -> ClosedTask:
    return ClosedTask(
        kind=kind,
        cylinder=cylinder,
        value=None,
        low_limit=None,
        high_limit=None,
        label=label,
        per_cylinder=kind in ("injector_replaced", "connector_replaced"),
    )


def close(tasks: list[ClosedTask], **kw: object) -> list[RuleViolation]:
    args: dict[str, object] = {
        "hour_meter": 2_000.0,
        "last_hour_meter": 1_990.0,
        "meter_replaced": False,
        "cylinders": 6,
    }
    args.update(kw)
    return close_violations(tasks=tasks, **args)  # type: ignore[arg-type]


def test_injectors_each_need_their_connector() -> None:
    # common practice: high-pressure connectors seal by deformation and are not reused.
    tasks = [
        task("injector_replaced", 1),
        task("connector_replaced", 1),
        task("injector_replaced", 3),
        task("injector_replaced", 5),
        task("connector_replaced", 5),
        task("connector_replaced", 4),  # a connector on another cylinder does not count
    ]
    (v,) = close(tasks)
    assert v.code == "injector_without_connector"
    assert v.cylinder == 3
    assert v.overridable is True
    assert v.message == (
        "Injector replaced on cylinder 3 without a new high-pressure connector on cylinder 3."
    )


def test_all_connectors_present_closes() -> None:
    tasks = [task("injector_replaced", c) for c in (2, 4)]
    tasks += [task("connector_replaced", c) for c in (4, 2)]
    assert close(tasks) == []


def test_cylinder_out_of_range_is_not_overridable() -> None:
    violations = close([task("connector_replaced", 7, "HP connector")], cylinders=6)
    assert [(v.code, v.cylinder, v.overridable) for v in violations] == [
        ("cylinder_out_of_range", 7, False)
    ]
    assert close([task("connector_replaced", 0)])[0].code == "cylinder_out_of_range"
    assert close([task("connector_replaced", 6)]) == []


def test_a_per_cylinder_task_must_name_its_cylinder() -> None:
    (v,) = close([task("connector_replaced", None, "HP connector")])
    assert (v.code, v.message, v.overridable) == (
        "cylinder_missing",
        "HP connector: say which cylinder.",
        False,
    )
    assert close([task("relief_valve_replaced", None)]) == []  # one per engine: no cylinder


@pytest.mark.parametrize(
    ("cylinder", "exists"),
    [(0, False), (1, True), (6, True), (7, False), (-1, False), (2.0, True), (2.5, False)],
)
def test_cylinders_are_numbered_one_to_n(cylinder: float, exists: bool) -> None:
    # common practice: the cylinders of an n-cylinder engine are numbered 1 to n.
    assert cylinder_exists(cylinder=cylinder, cylinders=6) is exists


def test_hour_meter_backwards() -> None:
    (v,) = close([], hour_meter=1_980.0, last_hour_meter=1_990.5)
    assert v.code == "hour_meter_backwards" and v.overridable is False
    assert "1,980.0" in v.message and "1,990.5" in v.message
    assert close([], hour_meter=1_980.0, last_hour_meter=1_990.5, meter_replaced=True) == []
    assert close([], hour_meter=1_990.5, last_hour_meter=1_990.5) == []


def test_follow_ups_name_measurement_value_and_limit() -> None:
    low = ClosedTask("measurement", None, 3.2, 4.0, 6.5, "Supply pressure (bar)")
    high = ClosedTask("measurement", 2, 48.0, None, 40.0, "Leak-off (mL/min)")
    fine = ClosedTask("measurement", None, 5.0, 4.0, 6.5, "Supply pressure (bar)")
    assert follow_ups(tasks=[low, high, fine]) == [
        "Follow up Supply pressure (bar): measured 3.2, below the low limit 4.",
        "Follow up Leak-off (mL/min) on cylinder 2: measured 48, above the high limit 40.",
    ]


@pytest.mark.parametrize(
    ("value", "breach", "passed"),
    [
        (3.99, "below", False),
        (4.0, None, True),  # on a limit passes
        (7.0, None, True),
        (7.01, "above", False),
    ],
)
def test_measurement_pass_band_includes_its_edges(
    value: float, breach: str | None, passed: bool
) -> None:
    # common practice: a pass band "4.0 - 7.0" accepts 4.0 and 7.0.
    assert measurement_breach(value=value, low=4.0, high=7.0) == breach
    assert measurement_passed(value=value, low=4.0, high=7.0) is passed


def test_a_one_sided_limit_and_no_value() -> None:
    assert measurement_passed(value=100.0, low=1.5, high=None) is True
    assert measurement_passed(value=0.31, low=None, high=0.3) is False
    assert measurement_passed(value=None, low=4.0, high=7.0) is None


@given(
    value=st.floats(-1e3, 1e3),
    low=st.none() | st.floats(-1e3, 1e3),
    high=st.none() | st.floats(-1e3, 1e3),
)
def test_a_follow_up_is_made_exactly_for_a_failed_measurement(
    value: float, low: float | None, high: float | None
) -> None:
    measured = ClosedTask("measurement", None, value, low, high, "Pressure")
    assert bool(follow_ups(tasks=[measured])) is (
        measurement_passed(value=value, low=low, high=high) is False
    )


def test_only_a_manager_may_override() -> None:
    assert override_permitted(role="manager") is True
    for role in ("mechanic", "auditor", "", None):
        assert override_permitted(role=role) is False


def test_override_by_manager_with_reason() -> None:
    violations = close([task("injector_replaced", 2)])
    ok, message = override_allowed(
        violations=violations, role="manager", reason="Connector on back order; fitted tomorrow"
    )
    assert ok is True
    assert "back order" in message


def test_override_refused() -> None:
    violations = close([task("injector_replaced", 2)])
    reason = "Connector on back order; fitted tomorrow"
    assert override_allowed(violations=violations, role="mechanic", reason=reason)[0] is False
    assert (
        override_allowed(violations=violations, role="manager", reason="  too short ")[0] is False
    )
    fixed = close([], hour_meter=1.0, last_hour_meter=2.0)
    ok, message = override_allowed(violations=fixed + violations, role="manager", reason=reason)
    assert ok is False and "cannot be overridden" in message


@given(
    injectors=st.sets(st.integers(1, 8)),
    connectors=st.sets(st.integers(1, 8)),
)
def test_exactly_the_cylinders_missing_a_connector_are_named(
    injectors: set[int], connectors: set[int]
) -> None:
    tasks = [task("injector_replaced", c) for c in injectors]
    tasks += [task("connector_replaced", c) for c in connectors]
    named = {v.cylinder for v in close(tasks, cylinders=8)}
    assert named == injectors - connectors
