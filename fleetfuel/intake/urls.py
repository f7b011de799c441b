"""Pages for data coming in (entry pages, imports), under /intake/."""

from django.urls import path

from . import entry_views, feed_pages

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
]
