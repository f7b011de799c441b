"""The composed pages keep the paths people know (/due/, /fleet/units/, /history/exports/...)."""

from django.urls import path

from . import units

app_name = "pages"
urlpatterns = [
    path("fleet/units/", units.unit_list, name="unit_list"),
    path("fleet/units/<int:pk>/", units.unit_detail, name="unit_detail"),
]
