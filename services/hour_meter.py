"""Whether hour-meter readings are plausible.

An engine's hour meter only counts up, so a reading below an earlier one is a mistake unless
the meter was replaced in between; a replacement is recorded as the old meter's final reading
and the new meter's reading when fitted (common practice).
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import datetime
from typing import Final

# A reading this far below the one before it, and below half of it, is not a slip of the
# pen: the meter was probably replaced (common practice; our own threshold). A single
# mistyped reading is told apart by the reading after it, which returns to the old level.
PROBABLE_CHANGE_DROP_H: Final = 100.0


def meter_backwards(*, hours: float | None, earlier_hours: float | None, replaced: bool) -> bool:
    """Whether ``hours`` goes back below ``earlier_hours`` with no meter replaced in between.

    Equal readings are not backwards (a unit that stood still). Nothing to compare (either
    reading missing) is not backwards either.
    """
    if hours is None or earlier_hours is None:
        return False
    return hours < earlier_hours and not replaced


def meter_entry_problems(
    *,
    hour_meter: float | None,
    meter_replaced: bool,
    meter_old_final: float | None,
    meter_new_start: float | None,
    last_hours: float | None,
) -> list[str]:
    """What is missing or implausible in a job's hour-meter entry, in plain sentences.

    The reading itself is required. When the meter was replaced: the new meter's starting
    reading is required, the reading cannot be below it, and the old meter's final reading
    cannot be below the old meter's last recorded reading. (A reading below the last one
    without a replacement is a closing rule: ``rules.close_violations``.)
    """
    problems = []
    if hour_meter is None:
        problems.append("Enter the hour meter reading at the job.")
    if not meter_replaced:
        return problems
    if meter_new_start is None:
        problems.append("Meter replaced: enter the new meter's reading when it was fitted.")
    elif meter_backwards(hours=hour_meter, earlier_hours=meter_new_start, replaced=False):
        problems.append(
            f"The hour meter ({hour_meter:,.1f} h) is below the new meter's starting "
            f"reading ({meter_new_start:,.1f} h)."
        )
    if meter_backwards(hours=meter_old_final, earlier_hours=last_hours, replaced=False):
        problems.append(
            f"The old meter's final reading ({meter_old_final:,.1f} h) is below its last "
            f"recorded reading ({last_hours:,.1f} h)."
        )
    return problems


def meter_drop(*, points: Sequence[tuple[datetime, float]]) -> int | None:
    """Index of the first reading after the latest probable unrecorded meter change, or None.

    ``points`` are (moment, hours) oldest first, with recorded replacements already applied.
    A drop counts when the reading is more than :data:`PROBABLE_CHANGE_DROP_H` below the one
    before, below half of it, and the next reading (if any) stays below the old level.
    """
    found = None
    for i in range(1, len(points)):
        before, after = points[i - 1][1], points[i][1]
        if before - after <= PROBABLE_CHANGE_DROP_H or after >= before / 2:
            continue
        if i + 1 < len(points) and points[i + 1][1] >= before:
            continue  # one mistyped reading: the next one is back at the old level
        found = i
    return found
