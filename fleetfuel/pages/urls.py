"""The composed pages keep the paths people know (/due/, /fleet/units/, /history/exports/...)."""

from django.urls import path  # noqa: F401

app_name = "pages"
urlpatterns: list = []  # type: ignore[type-arg]
