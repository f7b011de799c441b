"""The rules for closing a work order (unit flags from engine events: test_flags.py)."""

from __future__ import annotations

from hypothesis import given
from hypothesis import strategies as st

from services.rules import (
    ClosedTask,
    RuleViolation,
    close_violations,
    follow_ups,
    override_allowed,
)

# ----------------------------------------------------------------- closing rules


def task(kind: str, cylinder: int | None = None, label: str = "") -> ClosedTask:
    return ClosedTask(
        kind=kind, cylinder=cylinder, value=None, low_limit=None, high_limit=None, label=label
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
