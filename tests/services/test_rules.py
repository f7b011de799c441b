"""The rules for closing a work order (unit flags from engine events: test_flags.py)."""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from services.rules import (
    ClosedTask,
    RuleViolation,
    close_violations,
    cylinder_exists,
    follow_ups,
    measurement_breach,
    measurement_passed,
    override_allowed,
    override_permitted,
)

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
