"""Pages for data coming in (entry pages, imports), under /intake/."""

from django.urls import path

from . import feed_pages

app_name = "intake"
urlpatterns = [
    # The telematics feed's tokens (the feed itself is under /api/v1/).
    path("feed-tokens/", feed_pages.feed_tokens, name="feed_tokens"),
    path(
        "feed-tokens/<int:pk>/revoke/",
        feed_pages.feed_token_revoke_view,
        name="feed_token_revoke",
    ),
]
