"""Pages for data coming in (entry pages, imports), under /intake/."""

from django.urls import path  # noqa: F401

app_name = "intake"
urlpatterns: list = []  # type: ignore[type-arg]
