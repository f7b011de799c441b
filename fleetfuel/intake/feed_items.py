"""The telematics feed's body, read and checked item by item before anything is looked up.

Each item either becomes a :class:`FeedItem` or gets one sentence saying what is wrong with
it. SAE J1939-71 numbers an SPN in 19 bits (0 to 524,287) and SAE J1939-73 an FMI in 5 bits
(0 to 31); any SPN in that range is taken, and one above 520,191 (manufacturer-proprietary)
is stored as given and never interpreted.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from services.plausibility import time_refusal

MAX_ITEMS = 1_000
MAX_BODY_BYTES = 1_000_000  # 1 MB
MAX_ID_LENGTH = 100
SPN_MAX = 2**19 - 1  # 524,287: 19 bits (SAE J1939-71)
FMI_MAX = 31  # 5 bits (SAE J1939-73)
COUNT_MAX = 2**31 - 1  # what the occurrences column holds
TYPES = ("hours", "fault")


class BodyError(ValueError):
    """The request as a whole cannot be read; the message says why (HTTP 400)."""


@dataclass(frozen=True)
class FeedItem:
    id: str
    unit: str
    type: str  # "hours" or "fault"
    at: datetime
    hours: float | None = None
    spn: int | None = None
    fmi: int | None = None
    count: int = 1


def _no_nul(value: Any) -> Any:
    if isinstance(value, str) and "\x00" in value:
        raise BodyError("The JSON holds a NUL character (\\u0000) in a string; remove it.")
    if isinstance(value, dict):
        return {_no_nul(k): _no_nul(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_no_nul(v) for v in value]
    return value


def body_items(body: bytes) -> list[Any]:
    """The list under ``items`` in a UTF-8 JSON body, or :class:`BodyError`."""
    nul = body.find(b"\x00")
    if nul >= 0:
        raise BodyError(f"The body holds a NUL byte (at byte {nul}); send JSON text.")
    try:
        text = body.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise BodyError(f"The body is not UTF-8 (byte {exc.start}); send UTF-8 JSON.") from None
    try:
        document = json.loads(text)
    except json.JSONDecodeError as exc:
        raise BodyError(
            f"The body is not valid JSON: {exc.msg} at line {exc.lineno}, column {exc.colno}."
        ) from None
    except (RecursionError, ValueError):
        raise BodyError(
            "The body is not valid JSON: nested too deep or a number too long."
        ) from None
    if not isinstance(document, dict) or "items" not in document:
        raise BodyError('The body must be a JSON object with a list under "items".')
    items = document["items"]
    if not isinstance(items, list):
        raise BodyError(f'"items" must be a list, not {_kind(items)}.')
    return _no_nul(items)  # type: ignore[no-any-return]


def _kind(value: Any) -> str:
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true/false"
    return {dict: "an object", list: "a list", str: "a string"}.get(type(value), "a number")


def _time(value: Any, *, kind: Any, now: datetime) -> datetime:
    if not isinstance(value, str):
        raise ValueError(f'"at" must be an ISO 8601 time as a string, not {_kind(value)}.')
    try:
        at = datetime.fromisoformat(value)
    except ValueError:
        raise ValueError(f'"at" is not an ISO 8601 time: {value[:40]!r}.') from None
    if at.utcoffset() is None:
        raise ValueError(f'"at" has no UTC offset: {value[:40]!r} (add Z or +hh:mm).')
    future = time_refusal(at=at, now=now, what="reading" if kind == "hours" else "engine event")
    if future:
        raise ValueError(future)
    return at


def _int(item: dict[str, Any], name: str, *, low: int, high: int) -> int:
    value = item.get(name)
    if isinstance(value, float) and value.is_integer():
        value = int(value)
    if not isinstance(value, int) or isinstance(value, bool):
        raise ValueError(f'"{name}" must be a whole number, not {_kind(value)}.')
    if not low <= value <= high:
        raise ValueError(f'"{name}" {value} is out of range ({low} to {high:,}).')
    return value


def _hours(value: Any) -> float:
    if not isinstance(value, int | float) or isinstance(value, bool):
        raise ValueError(f'"hours" must be a number, not {_kind(value)}.')
    hours = float(value)
    if not math.isfinite(hours):
        raise ValueError('"hours" must be a finite number.')
    if hours < 0:
        raise ValueError(f'"hours" cannot be negative ({hours:g}).')
    return hours


def _blank(value: Any) -> bool:
    return value is None or (isinstance(value, str) and not value.strip())


def item_parse(raw: Any, *, now: datetime) -> FeedItem:
    """One item of the body as a :class:`FeedItem`; ``ValueError`` saying what is wrong."""
    if not isinstance(raw, dict):
        raise ValueError(f"Each item must be a JSON object, not {_kind(raw)}.")
    missing = [k for k in ("id", "unit", "type", "at") if _blank(raw.get(k))]
    kind = raw.get("type")
    if kind == "hours" and raw.get("hours") is None:
        missing.append("hours")
    if kind == "fault":
        missing.extend(k for k in ("spn", "fmi") if raw.get(k) is None)
    if missing:
        raise ValueError(f"Missing {', '.join(repr(k) for k in missing)}.")
    for name in ("id", "unit"):
        if not isinstance(raw[name], str):
            raise ValueError(f'"{name}" must be a string, not {_kind(raw[name])}.')
    if len(raw["id"]) > MAX_ID_LENGTH:
        raise ValueError(f'"id" is longer than {MAX_ID_LENGTH} characters.')
    if kind not in TYPES:
        raise ValueError(f'"type" must be "hours" or "fault", not {str(kind)[:20]!r}.')
    at = _time(raw["at"], kind=kind, now=now)
    base = {"id": raw["id"], "unit": raw["unit"].strip(), "type": kind, "at": at}
    if kind == "hours":
        return FeedItem(**base, hours=_hours(raw["hours"]))
    hours = None if raw.get("hours") is None else _hours(raw["hours"])
    count = 1 if raw.get("count") is None else _int(raw, "count", low=1, high=COUNT_MAX)
    return FeedItem(
        **base,
        hours=hours,
        spn=_int(raw, "spn", low=0, high=SPN_MAX),
        fmi=_int(raw, "fmi", low=0, high=FMI_MAX),
        count=count,
    )


def item_id(raw: Any) -> Any:
    """The client's id of an item, echoed in its result even when the item is refused."""
    if isinstance(raw, dict) and isinstance(raw.get("id"), str | int):
        return raw["id"]
    return None
