from django.apps import AppConfig


class FleetConfig(AppConfig):
    name = "fleetfuel.fleet"
    label = "fleet"
