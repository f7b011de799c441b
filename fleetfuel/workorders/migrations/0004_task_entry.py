from django.db import migrations


class Migration(migrations.Migration):
    """A task's draft values are its ``entry`` (what the mechanic entered), not a "record":
    the record is the ledger's service events."""

    dependencies = [
        ("workorders", "0003_task_not_done"),
    ]

    operations = [
        migrations.RenameField(model_name="workordertask", old_name="record", new_name="entry"),
    ]
