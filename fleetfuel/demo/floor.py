"""The floor page of the benchmark and the load run: the base template rendered through the
whole middleware stack with no query (anonymous, no session). It is served only by the
URLconf below, which the benchmark and ``fleetfuel.demo.load_wsgi`` install for their own
process; the application's URLconf (``fleetfuel.urls``) never includes it.
"""

from __future__ import annotations

from django.http import HttpRequest, HttpResponse
from django.shortcuts import render
from django.urls import include, path
from django.views.decorators.http import require_GET

FLOOR_PATH = "/__floor__/"


@require_GET
def floor(request: HttpRequest) -> HttpResponse:
    return render(request, "demo/floor.html")


urlpatterns = [
    path(FLOOR_PATH.strip("/") + "/", floor, name="benchmark_floor"),
    path("", include("fleetfuel.urls")),
]
