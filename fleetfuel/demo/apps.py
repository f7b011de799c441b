from django.apps import AppConfig


class DemoConfig(AppConfig):
    """The invented demo fleet. It stands above every other app (it builds rows of all of them)."""

    name = "fleetfuel.demo"
    label = "demo"
