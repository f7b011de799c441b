from django.urls import path

from . import views

app_name = "planning"
urlpatterns = [
    path("", views.due_list, name="due_list"),
    path("items/<int:pk>/", views.due_item_detail, name="due_item_detail"),
    path("work-orders/", views.work_orders_create, name="work_orders_create"),
    path("work-list/send/", views.worklist_send_now, name="worklist_send_now"),
    path("work-list/settings/", views.worklist_settings, name="worklist_settings"),
]
