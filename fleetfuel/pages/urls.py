"""The composed pages keep the paths people know (/due/, /fleet/units/, /history/exports/...)."""

from django.urls import path

from . import due_list, exports, units

app_name = "pages"
urlpatterns = [
    path("due/", due_list.due_list, name="due_list"),
    path("due/items/<int:pk>/", due_list.due_item_detail, name="due_item_detail"),
    path("due/work-orders/", due_list.work_orders_create, name="work_orders_create"),
    path("fleet/units/", units.unit_list, name="unit_list"),
    path("fleet/units/<int:pk>/", units.unit_detail, name="unit_detail"),
    path("history/exports/new/", exports.export, name="export"),
    path("history/exports/<int:pk>/manifest/", exports.export_manifest, name="export_manifest"),
]
