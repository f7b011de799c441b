import django.db.models.deletion
from django.conf import settings
from django.db import migrations, models


class Migration(migrations.Migration):

    dependencies = [
        ('fleet', '0001_initial'),
        ('ledger', '0001_initial'),
        migrations.swappable_dependency(settings.AUTH_USER_MODEL),
    ]

    operations = [
        migrations.CreateModel(
            name='ChainCheckpoint',
            fields=[
                ('id', models.BigAutoField(auto_created=True, primary_key=True, serialize=False, verbose_name='ID')),
                ('seq', models.PositiveIntegerField()),
                ('head_hash', models.CharField(max_length=64)),
                ('recorded_at', models.DateTimeField()),
                ('signature', models.CharField(max_length=64)),
                ('unit', models.ForeignKey(on_delete=django.db.models.deletion.PROTECT, related_name='checkpoints', to='fleet.unit')),
            ],
            options={
                'ordering': ['unit', '-seq'],
                'constraints': [models.UniqueConstraint(fields=('unit', 'seq'), name='checkpoint_one_per_unit_seq')],
            },
        ),
        migrations.CreateModel(
            name='ExportLog',
            fields=[
                ('id', models.BigAutoField(auto_created=True, primary_key=True, serialize=False, verbose_name='ID')),
                ('requested_at', models.DateTimeField()),
                ('via', models.CharField(choices=[('web', 'Web'), ('command', 'Command line')], max_length=10)),
                ('format', models.CharField(choices=[('csv', 'CSV'), ('xlsx', 'Excel (XLSX)'), ('print', 'Printable record (HTML)')], max_length=10)),
                ('filters', models.JSONField(default=dict)),
                ('file_name', models.CharField(max_length=200)),
                ('manifest', models.JSONField(default=dict)),
                ('row_count', models.PositiveIntegerField(blank=True, null=True)),
                ('sha256', models.CharField(blank=True, max_length=64, verbose_name='data file SHA-256')),
                ('finished_at', models.DateTimeField(blank=True, null=True)),
                ('requested_by', models.ForeignKey(blank=True, null=True, on_delete=django.db.models.deletion.PROTECT, related_name='ledger_exports', to=settings.AUTH_USER_MODEL)),
            ],
            options={
                'ordering': ['-requested_at', '-id'],
                'indexes': [models.Index(fields=['requested_by', '-requested_at'], name='export_by_user')],
            },
        ),
    ]
