from django.contrib import admin
from django.urls import include, path

urlpatterns = [
    path("", include("fleetfuel.accounts.urls")),
    path("due/", include("fleetfuel.planning.urls")),
    path("fleet/", include("fleetfuel.fleet.urls")),
    path("work/", include("fleetfuel.workorders.urls")),
    path("history/", include("fleetfuel.ledger.urls")),
    path("admin/", admin.site.urls),
]
