from django.urls import path

from . import views

app_name = "ledger"
urlpatterns = [
    path("", views.history, name="history"),
    path("<int:pk>/correct/", views.correct, name="correct"),
    path("exports/", views.exports, name="exports"),
    path("exports/new/", views.export, name="export"),
    path("exports/recent/", views.exports_recent, name="exports_recent"),
    path("exports/<int:pk>/manifest/", views.export_manifest, name="export_manifest"),
]
