"""Validation at the door of services/: numbers that are not numbers, and dates after now.

A NaN compares false with everything, so an unchecked NaN silently switches a limit off; an
infinity or a typing error of 10^12 L swamps every sum. Each input dataclass calls these in
``__post_init__`` (each function that takes ``now`` checks dates), and the Django side turns
the ValueError, which names the field, into a skipped item with its reason or a field error.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from datetime import datetime


def number_check(
    name: str, value: float | None, *, positive: bool = False, most: float = math.inf
) -> None:
    """ValueError naming ``name`` unless ``value`` is None or a finite number, 0 or more (above 0
    with ``positive``) and at most ``most``."""
    if value is None:
        return
    low_ok = value > 0 if positive else value >= 0
    if not (math.isfinite(value) and low_ok and value <= most):
        wanted = "a positive number" if positive else "a finite number, 0 or more"
        if math.isfinite(most):
            wanted += f", at most {most:,.0f}"
        raise ValueError(f"{name} must be {wanted}, got {value}")


def dates_check(*, items: Iterable[tuple[str, datetime]], now: datetime) -> None:
    """ValueError naming the first item dated after ``now``."""
    for name, at in items:
        if at > now:
            raise ValueError(f"{name}: dated {at.isoformat()}, after now ({now.isoformat()})")
