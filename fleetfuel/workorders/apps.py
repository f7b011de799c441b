from django.apps import AppConfig


class WorkordersConfig(AppConfig):
    name = "fleetfuel.workorders"
    label = "workorders"
