"""A correction names the kind the corrected entry really was (hashed only when set, so
every entry recorded before keeps its hash)."""

from django.conf import settings
from django.db import migrations, models


class Migration(migrations.Migration):
    dependencies = [
        ("fleet", "0005_dp_fuel_temperature_range"),
        ("ledger", "0007_exportlog_sites"),
        ("workorders", "0005_task_kind_filter_check"),
        migrations.swappable_dependency(settings.AUTH_USER_MODEL),
    ]

    operations = [
        migrations.AddField(
            model_name="serviceevent",
            name="corrected_kind",
            field=models.CharField(
                blank=True,
                choices=[
                    ("filter_changed", "Filter changed"),
                    ("separator_drained", "Water separator drained"),
                    ("injector_replaced", "Injector replaced"),
                    ("connector_replaced", "High-pressure connector replaced"),
                    ("relief_valve_replaced", "Rail relief valve replaced"),
                    ("part_replaced", "Other fuel-system part replaced"),
                    ("measurement", "Measurement taken"),
                    ("inspection", "Inspection"),
                    ("meter_replaced", "Hour meter replaced"),
                    ("rule_override", "Service rule overridden"),
                    ("correction", "Correction of an earlier entry"),
                ],
                max_length=30,
            ),
        ),
        migrations.AddConstraint(
            model_name="serviceevent",
            constraint=models.CheckConstraint(
                condition=models.Q(
                    ("corrected_kind", ""),
                    models.Q(
                        ("kind", "correction"),
                        models.Q(("corrected_kind", "correction"), _negated=True),
                    ),
                    _connector="OR",
                ),
                name="ledger_corrected_kind_on_corrections_only",
            ),
        ),
    ]
