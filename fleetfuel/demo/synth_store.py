"""Where the synthetic fleet's rows go: COPY on PostgreSQL, bulk inserts elsewhere; and how a
synthetic fleet is taken away again (its depots and everything that hangs from them).

The fleet is written in bulk, below the actions: no signal fires and no recompute is queued
(the benchmark projects every unit itself). Its service events are sealed here as
``service_events_append`` would seal them, so the chains verify and export like any other.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import Any

from django.contrib.auth import get_user_model
from django.db import connection, models, transaction

from fleetfuel.fleet.models import FuelSource, Site, Unit
from fleetfuel.ledger.models import ServiceEvent


class Sink:
    """Writes rows (dicts of attnames, the rest the fields' defaults) of one model at a time."""

    def __init__(self) -> None:
        self.postgres = connection.vendor == "postgresql"
        self.counts: dict[str, int] = {}

    def write(self, model: type[models.Model], rows: Iterable[Mapping[str, Any]]) -> None:
        fields = [f for f in model._meta.concrete_fields if not f.primary_key]
        defaults = {f.attname: f.get_default() for f in fields}
        names = [f.attname for f in fields]
        n = 0
        if self.postgres:
            columns = ", ".join(connection.ops.quote_name(f.column) for f in fields)
            table = connection.ops.quote_name(model._meta.db_table)
            sql = f"COPY {table} ({columns}) FROM STDIN"
            with connection.cursor() as cursor, cursor.cursor.copy(sql) as copy:
                for row in rows:
                    full = defaults | dict(row)
                    copy.write_row([full[name] for name in names])
                    n += 1
        else:
            batch: list[models.Model] = []
            for row in rows:
                batch.append(model(**(defaults | dict(row))))
                n += 1
                if len(batch) >= 2000:
                    model._default_manager.bulk_create(batch)
                    batch = []
            model._default_manager.bulk_create(batch)
        label = model._meta.label
        self.counts[label] = self.counts.get(label, 0) + n

    def analyze(self) -> None:
        """As autovacuum would after a bulk load: the planner needs the new tables' sizes."""
        if self.postgres:
            with connection.cursor() as cursor:
                cursor.execute("ANALYZE")


def _purge(model: type[models.Model], where: str, params: list[Any], depth: int = 0) -> None:
    """Delete ``model``'s rows matching ``where`` and, first, every row that refers to them,
    through every foreign key and many-to-many table the project declares (depth first)."""
    meta = model._meta
    table, pk = meta.db_table, meta.pk.column  # type: ignore[union-attr]
    chosen = f"SELECT {pk} FROM {table} WHERE {where}"
    with connection.cursor() as cursor:
        for field in meta.local_many_to_many:
            through = field.remote_field.through._meta  # type: ignore[union-attr]
            column = field.m2m_column_name()  # type: ignore[attr-defined]
            cursor.execute(f"DELETE FROM {through.db_table} WHERE {column} IN ({chosen})", params)
        for rel in meta.related_objects:
            if rel.many_to_many:
                through = rel.through._meta  # type: ignore[attr-defined]
                column = rel.field.m2m_reverse_name()  # type: ignore[attr-defined]
                cursor.execute(
                    f"DELETE FROM {through.db_table} WHERE {column} IN ({chosen})", params
                )
            elif rel.related_model is not model and depth < 6:
                column = rel.field.column
                _purge(rel.related_model, f"{column} IN ({chosen})", params, depth + 1)
        cursor.execute(f"DELETE FROM {table} WHERE {where}", params)


def synthetic_purge(*, site_ids: list[int], user_ids: list[int]) -> None:
    """Remove synthetic depots with everything at them, and the synthetic people.

    The service history is append-only: on PostgreSQL its triggers refuse DELETE, so this
    one transaction sets ``session_replication_role = replica`` (which a superuser or the
    tables' owner may) to switch them off for its own statements only. It is called for the
    synthetic depots alone (their codes start ``synth-``), never for a real one.
    """
    with transaction.atomic():
        if connection.vendor == "postgresql":
            with connection.cursor() as cursor:
                cursor.execute("SET LOCAL session_replication_role = replica")
        if site_ids:
            marks = ", ".join(["%s"] * len(site_ids))
            units = f"SELECT id FROM {Unit._meta.db_table} WHERE site_id IN ({marks})"
            _purge(ServiceEvent, f"unit_id IN ({units})", site_ids)
            _purge(FuelSource, f"site_id IN ({marks})", site_ids)
            _purge(Site, f"id IN ({marks})", site_ids)
        if user_ids:
            marks = ", ".join(["%s"] * len(user_ids))
            _purge(get_user_model(), f"id IN ({marks})", user_ids)
