from django.urls import path

from . import source_views, views

# The due list, its items and work orders from them: fleetfuel/pages (same /due/ paths).
app_name = "planning"
urlpatterns = [
    path("work-list/send/", views.worklist_send_now, name="worklist_send_now"),
    path("work-list/settings/", views.worklist_settings, name="worklist_settings"),
    path("sources/decisions/<int:pk>/", source_views.source_decision, name="source_decision"),
]
