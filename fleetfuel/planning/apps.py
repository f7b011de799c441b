from django.apps import AppConfig


class PlanningConfig(AppConfig):
    name = "fleetfuel.planning"
    label = "planning"

    def ready(self) -> None:
        from . import signals  # noqa: F401
