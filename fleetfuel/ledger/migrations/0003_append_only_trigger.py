"""On PostgreSQL, the database itself refuses UPDATE and DELETE on the service history.

SQLite has no such trigger here: there the app-level guard (ServiceEvent.save/delete and the
read-only admin) holds. TRUNCATE is refused by migration 0006 (a statement trigger).
"""

from django.db import migrations

CREATE = """
CREATE OR REPLACE FUNCTION ledger_serviceevent_refuse_change() RETURNS trigger AS $$
BEGIN
    RAISE EXCEPTION 'ledger_serviceevent is append-only: % refused; record a correction instead', TG_OP
        USING ERRCODE = 'restrict_violation';
END;
$$ LANGUAGE plpgsql;
CREATE TRIGGER ledger_serviceevent_append_only
    BEFORE UPDATE OR DELETE ON ledger_serviceevent
    FOR EACH ROW EXECUTE FUNCTION ledger_serviceevent_refuse_change();
"""

DROP = """
DROP TRIGGER IF EXISTS ledger_serviceevent_append_only ON ledger_serviceevent;
DROP FUNCTION IF EXISTS ledger_serviceevent_refuse_change();
"""


def trigger_create(apps, schema_editor):
    if schema_editor.connection.vendor == "postgresql":
        schema_editor.execute(CREATE, params=None)


def trigger_drop(apps, schema_editor):
    if schema_editor.connection.vendor == "postgresql":
        schema_editor.execute(DROP, params=None)


class Migration(migrations.Migration):
    dependencies = [("ledger", "0002_chaincheckpoint_exportlog")]

    operations = [migrations.RunPython(trigger_create, trigger_drop)]
