"""An export records the sites it covered; earlier exports get them from their manifest's
units (each names its unit id), so a person sees only exports wholly within their sites."""

from django.db import migrations, models


def sites_fill(apps, schema_editor):
    ExportLog = apps.get_model("ledger", "ExportLog")
    Unit = apps.get_model("fleet", "Unit")
    site_of = dict(Unit.objects.values_list("pk", "site_id"))
    for log in ExportLog.objects.only("pk", "manifest").iterator(chunk_size=500):
        units = (log.manifest or {}).get("units", [])
        ids = {site_of[u["unit_id"]] for u in units if u.get("unit_id") in site_of}
        log.sites.set(ids)


class Migration(migrations.Migration):
    dependencies = [
        ("fleet", "0003_intake_fields"),
        ("ledger", "0006_append_only_checkpoints_no_truncate"),
    ]

    operations = [
        migrations.AddField(
            model_name="exportlog",
            name="sites",
            field=models.ManyToManyField(blank=True, related_name="+", to="fleet.site"),
        ),
        migrations.RunPython(sites_fill, migrations.RunPython.noop),
    ]
