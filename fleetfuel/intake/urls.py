"""Pages for data coming in (entry pages, imports), under /intake/."""

from django.urls import path

from . import entry_views, feed_pages
from .imports import views as import_views

app_name = "intake"
urlpatterns = [
    path("", entry_views.entry_home, name="home"),
    path("hours/", entry_views.hours_round, name="hours"),
    path("fuel/", entry_views.fueling_entry, name="fuel"),
    path("delivery/", entry_views.delivery_entry, name="delivery"),
    path("sample/", entry_views.sample_entry, name="sample"),
    path("event/", entry_views.event_entry, name="event"),
    # The telematics feed's tokens (the feed itself is under /api/v1/).
    path("feed-tokens/", feed_pages.feed_tokens, name="feed_tokens"),
    path(
        "feed-tokens/<int:pk>/revoke/",
        feed_pages.feed_token_revoke_view,
        name="feed_token_revoke",
    ),
    # spreadsheet imports
    path("import/", import_views.import_upload, name="import"),
    path("import/<int:pk>/", import_views.import_run_page, name="import_run"),
    path("import/<int:pk>/apply/", import_views.import_run_apply_view, name="import_apply"),
    path("import/<int:pk>/rejects/", import_views.import_rejects, name="import_rejects"),
    path(
        "import/template/<str:kind>.<str:fmt>",
        import_views.import_template,
        name="import_template",
    ),
]
