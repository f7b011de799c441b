"""The rules a work order must pass to close.

Unit flags from engine events (J1939 labels, relief-valve and pump flags) are in
services/flags.py.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from services.display import count_noun
from services.hour_meter import meter_backwards

# --------------------------------------------------------------------------- closing rules

TASK_KINDS = (
    "injector_replaced",
    "connector_replaced",
    "relief_valve_replaced",
    "filter_changed",
    "separator_drained",
    "measurement",
    "other",
)
OVERRIDING_ROLE = "manager"  # accounts' Role.MANAGER (a test keeps the two equal)
MIN_OVERRIDE_REASON = 10


@dataclass(frozen=True, slots=True)
class ClosedTask:
    kind: str  # one of TASK_KINDS
    cylinder: int | None
    value: float | None
    low_limit: float | None
    high_limit: float | None
    label: str
    per_cylinder: bool = False  # the task is done on one cylinder, which it must name


@dataclass(frozen=True, slots=True)
class RuleViolation:
    code: str
    message: str
    cylinder: int | None
    overridable: bool


def cylinder_numbers(*, cylinders: int) -> range:
    """The cylinders of an engine of ``cylinders`` cylinders: numbered 1 to n (common
    practice)."""
    return range(1, cylinders + 1)


def cylinder_exists(*, cylinder: float, cylinders: int) -> bool:
    """Whether an engine of ``cylinders`` cylinders has cylinder ``cylinder``: they are
    numbered 1 to n (common practice); a fraction is no cylinder."""
    return cylinder == int(cylinder) and int(cylinder) in cylinder_numbers(cylinders=cylinders)


def measurement_breach(*, value: float, low: float | None, high: float | None) -> str | None:
    """Which limit a value breaks: "below", "above", or None (a value on a limit passes)."""
    if low is not None and value < low:
        return "below"
    if high is not None and value > high:
        return "above"
    return None


def measurement_passed(
    *, value: float | None, low: float | None, high: float | None
) -> bool | None:
    """Pass (True), fail (False), or None when nothing was measured."""
    return None if value is None else measurement_breach(value=value, low=low, high=high) is None


def override_permitted(*, role: str | None) -> bool:
    """Whether a person of ``role`` may override a closing rule: a manager only."""
    return role == OVERRIDING_ROLE


def close_violations(
    *,
    tasks: Sequence[ClosedTask],
    hour_meter: float | None,
    last_hour_meter: float | None,
    meter_replaced: bool,
    cylinders: int,
) -> list[RuleViolation]:
    """What stops a work order from closing.

    * A replaced injector needs a new high-pressure connector on the same cylinder
      in the same work order (common practice: the connectors seal by deformation
      and are not reused). Overridable by a manager with a written reason.
    * A cylinder outside 1..cylinders is an error (not overridable).
    * The hour meter may not go backwards unless a meter replacement is recorded
      (not overridable).
    """
    violations: list[RuleViolation] = []
    valid: list[ClosedTask] = []
    for t in tasks:
        if t.cylinder is not None and not cylinder_exists(cylinder=t.cylinder, cylinders=cylinders):
            violations.append(
                RuleViolation(
                    code="cylinder_out_of_range",
                    message=(
                        f"{t.label or t.kind}: cylinder {t.cylinder} does not exist on this "
                        f"engine (cylinders 1 to {cylinders})."
                    ),
                    cylinder=t.cylinder,
                    overridable=False,
                )
            )
        elif t.cylinder is None and t.per_cylinder:
            violations.append(
                RuleViolation(
                    code="cylinder_missing",
                    message=f"{t.label or t.kind}: say which cylinder.",
                    cylinder=None,
                    overridable=False,
                )
            )
        else:
            valid.append(t)

    connectors = {t.cylinder for t in valid if t.kind == "connector_replaced"}
    injectors = sorted(
        {t.cylinder for t in valid if t.kind == "injector_replaced" and t.cylinder is not None}
    )
    for cyl in injectors:
        if cyl not in connectors:
            violations.append(
                RuleViolation(
                    code="injector_without_connector",
                    message=(
                        f"Injector replaced on cylinder {cyl} without a new high-pressure "
                        f"connector on cylinder {cyl}."
                    ),
                    cylinder=cyl,
                    overridable=True,
                )
            )

    if meter_backwards(hours=hour_meter, earlier_hours=last_hour_meter, replaced=meter_replaced):
        violations.append(
            RuleViolation(
                code="hour_meter_backwards",
                message=(
                    f"The hour meter reads {hour_meter:,.1f} h, below the last reading of "
                    f"{last_hour_meter:,.1f} h, and no meter replacement is recorded."
                ),
                cylinder=None,
                overridable=False,
            )
        )
    return violations


def follow_ups(*, tasks: Sequence[ClosedTask]) -> list[str]:
    """Follow-up task descriptions for measurements outside their limits."""
    out: list[str] = []
    for t in tasks:
        if t.kind != "measurement" or t.value is None:
            continue
        where = f" on cylinder {t.cylinder}" if t.cylinder is not None else ""
        side = measurement_breach(value=t.value, low=t.low_limit, high=t.high_limit)
        if side is not None:
            word, limit = ("low", t.low_limit) if side == "below" else ("high", t.high_limit)
            text = f"Follow up {t.label}{where}: measured {t.value:g}, {side} the {word} limit"
            out.append(f"{text} {limit:g}.")
    return out


def override_allowed(
    *, violations: Sequence[RuleViolation], role: str | None, reason: str
) -> tuple[bool, str]:
    """Whether ``role`` may override ``violations`` with ``reason``; returns (ok, message)."""
    if not violations:
        return True, "Nothing to override."
    if not override_permitted(role=role):
        return False, "Only a manager may override a closing rule."
    fixed = [v for v in violations if not v.overridable]
    if fixed:
        return False, "These cannot be overridden and must be corrected: " + " ".join(
            v.message for v in fixed
        )
    if len(reason.strip()) < MIN_OVERRIDE_REASON:
        return False, (
            f"Give a written reason of at least {MIN_OVERRIDE_REASON} characters for the override."
        )
    return True, f"Override accepted for {count_noun(len(violations), 'rule')}: {reason.strip()}"
