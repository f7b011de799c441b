from django.apps import AppConfig


class PagesConfig(AppConfig):
    """Pages composed from several apps (the due list, the unit page, exports with their
    scheduled tasks). It stands above every other app: it may import any of them; none imports
    it."""

    name = "fleetfuel.pages"
    label = "pages"
