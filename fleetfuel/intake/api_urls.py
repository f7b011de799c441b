"""Machine-to-machine endpoints, under /api/v1/ (the telematics feed)."""

from django.urls import path

from . import feed_views

app_name = "api"
urlpatterns = [
    path("telematics/", feed_views.telematics, name="telematics"),
]
