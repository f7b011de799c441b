# A status of its own for an item whose dirt estimate alone has run out ("check").

from django.db import migrations, models
from django.db.models import F


def ranks_shift(apps, schema_editor):
    """"check" takes rank 1: due, soon and ok move one down (recomputes write the same)."""
    DueItem = apps.get_model("planning", "DueItem")
    DueItem.objects.filter(rank__gte=1).update(rank=F("rank") + 1)


def ranks_unshift(apps, schema_editor):
    DueItem = apps.get_model("planning", "DueItem")
    DueItem.objects.filter(status="check").update(status="overdue", rank=0)
    DueItem.objects.filter(rank__gte=2).update(rank=F("rank") - 1)


class Migration(migrations.Migration):

    dependencies = [
        ("planning", "0007_source_decisions"),
    ]

    operations = [
        migrations.AlterField(
            model_name="dueitem",
            name="status",
            field=models.CharField(
                choices=[
                    ("overdue", "Overdue"),
                    ("check", "Check dP first"),
                    ("due", "Due"),
                    ("soon", "Soon"),
                    ("ok", "OK"),
                ],
                max_length=10,
            ),
        ),
        migrations.AlterField(
            model_name="dueitem",
            name="rank",
            field=models.PositiveSmallIntegerField(
                help_text="0 overdue, 1 check, 2 due, 3 soon, 4 ok"
            ),
        ),
        migrations.RunPython(ranks_shift, ranks_unshift),
    ]
