"""The read replica (DATABASE_REPLICA_URL, optional): exports and history reads may read from
it; nothing else does, and nothing is ever written there.

The router sends every model to ``default``: a read reaches the replica only where the code
asks for it by name (``.using(history_alias())``), so the rest of the app never reads data a
replica has not yet caught up with. Without DATABASE_REPLICA_URL, ``history_alias()`` is
``default``.

An export notes each unit's head on the primary when it starts and writes the rows up to it;
``history_alias(caught_up=True)`` gives the replica only once it has replayed the primary's
write-ahead log up to that moment (PostgreSQL), waiting at most REPLICA_WAIT_SECONDS, else
the primary: an export never misses an entry its manifest names.
"""

from __future__ import annotations

import time
from typing import Any

from django.conf import settings
from django.db import DEFAULT_DB_ALIAS, connections

REPLICA = "replica"
REPLICA_WAIT_SECONDS = 2.0


class PrimaryRouter:
    """Every read and write on ``default``; migrations on ``default`` only."""

    def db_for_read(self, model: Any, **hints: Any) -> str:
        return DEFAULT_DB_ALIAS

    def db_for_write(self, model: Any, **hints: Any) -> str:
        return DEFAULT_DB_ALIAS

    def allow_relation(self, obj1: Any, obj2: Any, **hints: Any) -> bool:
        return True  # the replica holds the same rows

    def allow_migrate(self, db: str, app_label: str, **hints: Any) -> bool:
        return db == DEFAULT_DB_ALIAS


def history_alias(*, caught_up: bool = False) -> str:
    """The database exports and history pages read: the replica when one is configured
    (and, with ``caught_up``, once it has replayed everything committed so far)."""
    if not settings.DATABASE_REPLICA_READS:
        return DEFAULT_DB_ALIAS
    if not caught_up or connections[REPLICA].vendor != "postgresql":
        return REPLICA
    with connections[DEFAULT_DB_ALIAS].cursor() as cursor:
        cursor.execute("SELECT pg_current_wal_lsn()")
        (primary_lsn,) = cursor.fetchone()
    deadline = time.monotonic() + REPLICA_WAIT_SECONDS
    while True:
        with connections[REPLICA].cursor() as cursor:
            # NULL when it is not replaying a log (not a standby: the same data, as a mirror).
            cursor.execute(
                "SELECT pg_last_wal_replay_lsn() IS NULL OR pg_last_wal_replay_lsn() >= %s",
                [primary_lsn],
            )
            if cursor.fetchone()[0]:
                return REPLICA
        if time.monotonic() >= deadline:
            return DEFAULT_DB_ALIAS
        time.sleep(0.1)
