from django.db import migrations, models


class Migration(migrations.Migration):

    dependencies = [
        ('ledger', '0003_append_only_trigger'),
    ]

    operations = [
        migrations.RemoveIndex(
            model_name='serviceevent',
            name='ledger_at',
        ),
        migrations.AddIndex(
            model_name='serviceevent',
            index=models.Index(fields=['performed_at', 'id'], name='ledger_at_id'),
        ),
    ]
