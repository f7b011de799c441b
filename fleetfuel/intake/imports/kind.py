"""What a kind of import is (its Layout), what a row may be refused for, and what a store
function is given (a Context of lookups shared by the rows of one file, and its writes)."""

from __future__ import annotations

from collections.abc import Callable, Iterator, Mapping
from dataclasses import dataclass, field
from datetime import datetime
from typing import Any, TypeVar
from zoneinfo import ZoneInfo

from django.contrib.auth.models import User
from django.core.exceptions import ValidationError
from django.db import models

from fleetfuel.fleet.models import FuelSource, Site, Unit
from services.plausibility import time_refusal

from .batch import Writes
from .columns import Column
from .neighbours import ReadingsNearby

CREATED, UPDATED, UNCHANGED = "created", "updated", "unchanged"
T = TypeVar("T")


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
    rows are written back out (dicts keyed by column key, values in SI). ``bulk``: its store
    function writes only through the Context (ctx.writes, row_save) and finds what earlier
    rows of the file wrote through it too (ctx.found, ctx.readings), so the rows of a chunk
    are written together (batch.py)."""

    kind: str
    title: str
    columns: tuple[Column, ...]
    key: tuple[str, ...]
    store: Callable[[dict[str, Any], Context], str]
    rows: Callable[[], Iterator[dict[str, Any]]]
    note: str = ""
    bulk: bool = False


@dataclass
class Context:
    """Lookups for one file's rows (each read once), the instant the import runs at, and the
    file's writes (batch.py; ``bulk``: made per chunk). ``site_ids``: the sites the importing
    person may reach (None: all, as for the command); units, sites and fuel sources elsewhere
    are not found."""

    now: datetime
    site_ids: frozenset[int] | None = None
    bulk: bool = False
    _units: dict[str, list[Unit]] = field(default_factory=dict)
    _sources: dict[str, FuelSource | None] = field(default_factory=dict)
    _users: dict[str, User | None] = field(default_factory=dict)
    _sites: dict[str, Site | None] = field(default_factory=dict)
    readings: ReadingsNearby = field(default_factory=ReadingsNearby)
    _found: dict[str, dict[Any, Any]] = field(default_factory=dict)
    writes: Writes = field(init=False)

    def __post_init__(self) -> None:
        self.writes = Writes(bulk=self.bulk)

    def restart(self, *, bulk: bool) -> None:
        """Forget what was read and written (a chunk rolled back, to be run again)."""
        self.writes = Writes(bulk=bulk)
        self.readings = ReadingsNearby()
        self._units.clear()
        self._found.clear()

    def found(self, table: str, key: Any, load: Callable[[], T]) -> T:
        """A lookup of the database's rows, made once per key for the file; a store function
        adds what it writes to the table it got, so later rows find it (before the flush)."""
        rows = self._found.setdefault(table, {})
        if key not in rows:
            rows[key] = load()
        return rows[key]  # type: ignore[no-any-return]

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
    database: bool = True,
) -> None:
    """full_clean (or only the fields' own checks), each message turned into a RowRefused
    naming the column (field names are the column keys unless ``columns`` maps them).
    ``database`` False: what the database checks at the insert (relations, uniqueness,
    constraints) is left to it, for a bulk chunk (run again row by row when it refuses)."""
    try:
        if fields_only:
            obj.clean_fields(exclude=exclude)
        elif database:
            obj.full_clean(exclude=exclude)
        else:
            relations = [f.name for f in obj._meta.concrete_fields if f.is_relation]
            obj.full_clean(exclude=[*(exclude or []), *relations], validate_unique=False,
                           validate_constraints=False)  # fmt: skip
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


def row_save(obj: Any, fields: dict[str, Any], existing: Any, ctx: Context, **check: Any) -> str:
    """Store ``obj`` (new) or update ``existing`` with ``fields`` through ``ctx.writes``;
    CREATED/UPDATED/UNCHANGED."""
    if existing is not None:
        if not fields_update(existing, fields):
            return UNCHANGED
        model_check(existing, **check)
        ctx.writes.update(existing)
        return UPDATED
    model_check(obj, **check, database=not ctx.writes.bulk)
    ctx.writes.create(obj)
    return CREATED


def unit_columns() -> tuple[Column, Column]:
    """The two columns naming a unit: its fleet number, and its site's code (needed only
    when the same fleet number is used at two sites)."""
    return (
        Column("unit", "unit", max_length=30, note="fleet number"),
        Column("site", "site", required=False, max_length=20, note="site code, if ambiguous"),
    )
