"""The rules a work order must pass to close.

Unit flags from engine events (J1939 labels, relief-valve and pump flags) are in
services/flags.py.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

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


@dataclass(frozen=True, slots=True)
class ClosedTask:
    kind: str  # one of TASK_KINDS
    cylinder: int | None
    value: float | None
    low_limit: float | None
    high_limit: float | None
    label: str


@dataclass(frozen=True, slots=True)
class RuleViolation:
    code: str
    message: str
    cylinder: int | None
    overridable: bool


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
        if t.cylinder is not None and not 1 <= t.cylinder <= cylinders:
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
        elif t.cylinder is None and t.kind in ("injector_replaced", "connector_replaced"):
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

    if (
        hour_meter is not None
        and last_hour_meter is not None
        and hour_meter < last_hour_meter
        and not meter_replaced
    ):
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
        if t.low_limit is not None and t.value < t.low_limit:
            out.append(
                f"Follow up {t.label}{where}: measured {t.value:g}, below the low limit "
                f"{t.low_limit:g}."
            )
        elif t.high_limit is not None and t.value > t.high_limit:
            out.append(
                f"Follow up {t.label}{where}: measured {t.value:g}, above the high limit "
                f"{t.high_limit:g}."
            )
    return out


MIN_OVERRIDE_REASON = 10


def override_allowed(
    *, violations: Sequence[RuleViolation], role: str, reason: str
) -> tuple[bool, str]:
    """Whether ``role`` may override ``violations`` with ``reason``; returns (ok, message)."""
    if not violations:
        return True, "Nothing to override."
    if role != "manager":
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
    return True, f"Override accepted for {len(violations)} rule(s): {reason.strip()}"
