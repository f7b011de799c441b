"""What a kind of import is (its Layout), what a row may be refused for, and what a store
function is given (a Context of lookups shared by the rows of one file)."""

from __future__ import annotations

from collections.abc import Callable, Iterator, Mapping
from dataclasses import dataclass, field
from datetime import datetime
from typing import Any
from zoneinfo import ZoneInfo

from django.contrib.auth.models import User
from django.core.exceptions import ValidationError
from django.db import models

from fleetfuel.fleet.models import FuelSource, Site, Unit
from services.plausibility import time_refusal

from .columns import Column
from .neighbours import ReadingsNearby

CREATED, UPDATED, UNCHANGED = "created", "updated", "unchanged"


class RowRefused(Exception):
    """One row refused: ``column`` is a column key (or "" for the row as a whole)."""

    def __init__(self, column: str, reason: str) -> None:
        super().__init__(reason)
        self.column = column
        self.reason = reason


@dataclass(frozen=True)
class Layout:
    """One kind of row: its columns, its natural key (column keys), how a row is stored
    (returns CREATED, UPDATED or UNCHANGED, or raises RowRefused) and how the database's
    rows are written back out (dicts keyed by column key, values in SI)."""

    kind: str
    title: str
    columns: tuple[Column, ...]
    key: tuple[str, ...]
    store: Callable[[dict[str, Any], Context], str]
    rows: Callable[[], Iterator[dict[str, Any]]]
    note: str = ""


@dataclass
class Context:
    """Lookups for one file's rows (each read once), and the instant the import runs at.
    ``site_ids``: the sites the importing person may reach (None: all, as for the command);
    units, sites and fuel sources elsewhere are not found."""

    now: datetime
    site_ids: frozenset[int] | None = None
    _units: dict[str, list[Unit]] = field(default_factory=dict)
    _sources: dict[str, FuelSource | None] = field(default_factory=dict)
    _users: dict[str, User | None] = field(default_factory=dict)
    _sites: dict[str, Site | None] = field(default_factory=dict)
    readings: ReadingsNearby = field(default_factory=ReadingsNearby)

    def unit_get(self, values: Mapping[str, Any]) -> Unit:
        number, site = values["unit"], values.get("site") or ""
        if number not in self._units:
            units = Unit.objects.filter(fleet_number=number).select_related("site", "unit_class")
            if self.site_ids is not None:
                units = units.filter(site_id__in=self.site_ids)
            self._units[number] = list(units)
        found = [u for u in self._units[number] if not site or u.site.code == site]
        if not found:
            where = f" at site {site!r}" if site else ""
            raise RowRefused("unit", f"no unit with fleet number {number!r}{where}")
        if len(found) > 1:
            codes = ", ".join(u.site.code for u in found)
            raise RowRefused("unit", f"fleet number {number!r} is at {codes}: add a site column")
        return found[0]

    def unit_forget(self, number: str) -> None:
        self._units.pop(number, None)

    def source_get(self, name: str, *, column: str = "source") -> FuelSource:
        if name not in self._sources:
            found = FuelSource.objects.select_related("site").filter(name=name).first()
            if found and found.site_id and self.site_ids is not None:
                found = found if found.site_id in self.site_ids else None
            self._sources[name] = found
        source = self._sources[name]
        if source is None:
            raise RowRefused(column, f"no fuel source named {name!r}")
        return source

    def site_get(self, code: str) -> Site:
        if code not in self._sites:
            sites = Site.objects.filter(code=code)
            if self.site_ids is not None:
                sites = sites.filter(pk__in=self.site_ids)
            self._sites[code] = sites.first()
        site = self._sites[code]
        if site is None:
            raise RowRefused("site", f"no site with code {code!r}")
        return site

    def user_get(self, username: str, *, column: str) -> User:
        if username not in self._users:
            self._users[username] = User.objects.filter(username=username).first()
        user = self._users[username]
        if user is None:
            raise RowRefused(column, f"no user named {username!r}")
        return user

    def instant(self, value: datetime, *, time_zone: str, column: str, what: str) -> datetime:
        """``value`` as an aware instant (a time without offset is the depot's), not in the
        future beyond the clock allowance (services.plausibility, as on every path)."""
        zone = ZoneInfo(time_zone)
        if value.tzinfo is None or value.utcoffset() is None:
            value = value.replace(tzinfo=zone)
        refusal = time_refusal(at=value.astimezone(zone), now=self.now.astimezone(zone), what=what)
        if refusal:
            raise RowRefused(column, refusal)
        return value


def model_check(
    obj: models.Model,
    *,
    columns: Mapping[str, str] | None = None,
    exclude: list[str] | None = None,
    fields_only: bool = False,
) -> None:
    """full_clean (or only the fields' own checks), each message turned into a RowRefused
    naming the column (field names are the column keys unless ``columns`` maps them)."""
    try:
        if fields_only:
            obj.clean_fields(exclude=exclude)
        else:
            obj.full_clean(exclude=exclude)
    except ValidationError as exc:
        raise validation_refusal(exc, columns=columns) from None


def validation_refusal(exc: ValidationError, *, columns: Mapping[str, str] | None) -> RowRefused:
    """The first message of a model's ValidationError, as a refusal naming its column."""
    if not hasattr(exc, "error_dict"):
        return RowRefused("", " ".join(exc.messages))
    field_name, messages = next(iter(exc.message_dict.items()))
    column = (columns or {}).get(field_name, field_name)
    return RowRefused("" if column == "__all__" else column, " ".join(messages))


def fields_update(obj: models.Model, values: Mapping[str, Any]) -> bool:
    """Set the fields that differ; True when any did."""
    changed = False
    for name, value in values.items():
        if getattr(obj, name) != value:
            setattr(obj, name, value)
            changed = True
    return changed


def row_save(obj: Any, fields: dict[str, Any], existing: Any, **check: Any) -> str:
    """Store ``obj`` (new) or update ``existing`` with ``fields``; CREATED/UPDATED/UNCHANGED."""
    if existing is not None:
        if not fields_update(existing, fields):
            return UNCHANGED
        model_check(existing, **check)
        existing.save()
        return UPDATED
    model_check(obj, **check)
    obj.save()
    return CREATED


def unit_columns() -> tuple[Column, Column]:
    """The two columns naming a unit: its fleet number, and its site's code (needed only
    when the same fleet number is used at two sites)."""
    return (
        Column("unit", "unit", max_length=30, note="fleet number"),
        Column("site", "site", required=False, max_length=20, note="site code, if ambiguous"),
    )
