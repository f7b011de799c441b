"""Machine-to-machine endpoints, under /api/v1/ (the telematics feed)."""

from django.urls import path  # noqa: F401

app_name = "api"
urlpatterns: list = []  # type: ignore[type-arg]
