from django.apps import AppConfig


class IntakeConfig(AppConfig):
    """How data comes in: entry pages, spreadsheet imports and exports, the telematics feed.
    It stands above every other app (it writes rows of several of them); none imports it."""

    name = "fleetfuel.intake"
    label = "intake"
