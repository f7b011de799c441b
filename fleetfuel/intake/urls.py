"""Pages for data coming in (entry pages, imports), under /intake/."""

from django.urls import path

from . import entry_views

app_name = "intake"
urlpatterns = [
    path("", entry_views.entry_home, name="home"),
    path("hours/", entry_views.hours_round, name="hours"),
    path("fuel/", entry_views.fueling_entry, name="fuel"),
    path("delivery/", entry_views.delivery_entry, name="delivery"),
    path("sample/", entry_views.sample_entry, name="sample"),
    path("event/", entry_views.event_entry, name="event"),
]
