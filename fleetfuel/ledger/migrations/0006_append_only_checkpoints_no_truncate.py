"""On PostgreSQL, the checkpoints and verification marks are append-only like the service
history (UPDATE and DELETE refused row by row), and TRUNCATE is refused on all three tables by
a statement trigger.

TRUNCATE is allowed only in a session that sets ``fleetfuel.ledger_truncate = 'allow'``: the
test runner does (settings, under FLEETFUEL_TESTING), as it empties tables between
transactional tests. Like every trigger, these stop mistakes and anyone without the rights of
the tables' owner; the owner or a superuser can drop them (README, "The service history").
"""

from django.db import migrations

ROW_TABLES = ("ledger_chaincheckpoint", "ledger_verificationmark")
ALL_TABLES = ("ledger_serviceevent", *ROW_TABLES)

FUNCTIONS = """
CREATE OR REPLACE FUNCTION ledger_refuse_row_change() RETURNS trigger AS $$
BEGIN
    RAISE EXCEPTION '% is append-only: % refused', TG_TABLE_NAME, TG_OP
        USING ERRCODE = 'restrict_violation';
END;
$$ LANGUAGE plpgsql;
CREATE OR REPLACE FUNCTION ledger_refuse_truncate() RETURNS trigger AS $$
BEGIN
    IF current_setting('fleetfuel.ledger_truncate', true) IS DISTINCT FROM 'allow' THEN
        RAISE EXCEPTION '% is append-only: TRUNCATE refused', TG_TABLE_NAME
            USING ERRCODE = 'restrict_violation';
    END IF;
    RETURN NULL;
END;
$$ LANGUAGE plpgsql;
"""


def _create_sql() -> str:
    parts = [FUNCTIONS]
    for table in ROW_TABLES:
        parts.append(
            f"CREATE TRIGGER {table}_append_only BEFORE UPDATE OR DELETE ON {table} "
            "FOR EACH ROW EXECUTE FUNCTION ledger_refuse_row_change();"
        )
    for table in ALL_TABLES:
        parts.append(
            f"CREATE TRIGGER {table}_no_truncate BEFORE TRUNCATE ON {table} "
            "FOR EACH STATEMENT EXECUTE FUNCTION ledger_refuse_truncate();"
        )
    return "\n".join(parts)


def _drop_sql() -> str:
    parts = [f"DROP TRIGGER IF EXISTS {t}_append_only ON {t};" for t in ROW_TABLES]
    parts += [f"DROP TRIGGER IF EXISTS {t}_no_truncate ON {t};" for t in ALL_TABLES]
    parts += [
        "DROP FUNCTION IF EXISTS ledger_refuse_row_change();",
        "DROP FUNCTION IF EXISTS ledger_refuse_truncate();",
    ]
    return "\n".join(parts)


def triggers_create(apps, schema_editor):
    if schema_editor.connection.vendor == "postgresql":
        schema_editor.execute(_create_sql(), params=None)


def triggers_drop(apps, schema_editor):
    if schema_editor.connection.vendor == "postgresql":
        schema_editor.execute(_drop_sql(), params=None)


class Migration(migrations.Migration):
    dependencies = [("ledger", "0005_checkpoint_key_verification_mark")]

    operations = [migrations.RunPython(triggers_create, triggers_drop)]
