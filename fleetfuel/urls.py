from django.contrib import admin
from django.urls import include, path

urlpatterns = [
    path("", include("fleetfuel.accounts.urls")),
    # Composed pages first: they own some paths under /due/, /fleet/ and /history/.
    path("", include("fleetfuel.pages.urls")),
    path("due/", include("fleetfuel.planning.urls")),
    path("work/", include("fleetfuel.workorders.urls")),
    path("history/", include("fleetfuel.ledger.urls")),
    path("intake/", include("fleetfuel.intake.urls")),
    path("api/v1/", include("fleetfuel.intake.api_urls")),
    path("admin/", admin.site.urls),
]
