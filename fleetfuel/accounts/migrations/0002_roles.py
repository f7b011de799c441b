"""Create the three roles as groups, with the model permissions each needs."""

from django.db import migrations

READ = ["view"]
ROLE_PERMISSIONS = {
    "manager": {
        "fleet": ["add", "change", "view"],
        "planning": ["view"],
        "workorders": ["add", "change", "view"],
        "ledger": ["add", "view"],
    },
    "mechanic": {
        "fleet": ["view"],
        "planning": ["view"],
        "workorders": ["change", "view"],
        "ledger": ["add", "view"],
    },
    "auditor": {
        "fleet": READ,
        "planning": READ,
        "workorders": READ,
        "ledger": READ,
    },
}


def create_roles(apps, schema_editor):
    from django.contrib.auth.management import create_permissions

    for app_config in apps.get_app_configs():
        app_config.models_module = True
        create_permissions(app_config, verbosity=0)
        app_config.models_module = None

    Group = apps.get_model("auth", "Group")
    Permission = apps.get_model("auth", "Permission")
    for role, apps_actions in ROLE_PERMISSIONS.items():
        group, _ = Group.objects.get_or_create(name=role)
        perms = []
        for app_label, actions in apps_actions.items():
            for action in actions:
                perms.extend(
                    Permission.objects.filter(
                        content_type__app_label=app_label, codename__startswith=f"{action}_"
                    )
                )
        group.permissions.set(perms)


def remove_roles(apps, schema_editor):
    apps.get_model("auth", "Group").objects.filter(name__in=ROLE_PERMISSIONS).delete()


class Migration(migrations.Migration):
    dependencies = [
        ("accounts", "0001_initial"),
        ("auth", "0012_alter_user_first_name_max_length"),
        ("contenttypes", "0002_remove_content_type_name"),
        ("fleet", "0001_initial"),
        ("planning", "0001_initial"),
        ("workorders", "0001_initial"),
        ("ledger", "0001_initial"),
    ]

    operations = [migrations.RunPython(create_roles, remove_roles)]
