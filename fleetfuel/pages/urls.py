"""The composed pages keep the paths people know (/due/, /fleet/units/, /history/exports/...)."""

from django.urls import path

from . import exports, units

app_name = "pages"
urlpatterns = [
    path("fleet/units/", units.unit_list, name="unit_list"),
    path("fleet/units/<int:pk>/", units.unit_detail, name="unit_detail"),
    path("history/exports/new/", exports.export, name="export"),
    path("history/exports/<int:pk>/manifest/", exports.export_manifest, name="export_manifest"),
]
