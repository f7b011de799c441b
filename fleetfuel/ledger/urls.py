"""The service history, its corrections and the export log. The exports themselves and their
manifests are composed above the ledger: see fleetfuel/pages/urls.py (history/exports/...)."""

from django.urls import path

from . import views

app_name = "ledger"
urlpatterns = [
    path("", views.history, name="history"),
    path("<int:pk>/correct/", views.correct, name="correct"),
    path("exports/", views.exports, name="exports"),
    path("exports/recent/", views.exports_recent, name="exports_recent"),
]
