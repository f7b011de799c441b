"""Make a telematics feed token for a site (its secret printed once), or revoke one."""

from __future__ import annotations

from typing import Any

from django.core.management.base import BaseCommand, CommandError, CommandParser
from django.db import IntegrityError
from django.utils import timezone

from fleetfuel.fleet.models import Site
from fleetfuel.intake.feed_tokens import feed_token_create, feed_token_revoke
from fleetfuel.intake.models import FeedToken


class Command(BaseCommand):
    help = (
        "Make a token for the telematics feed NAME at site CODE and print its secret once "
        "(only a SHA-256 of it is stored), or revoke the live token NAME with --revoke NAME."
    )

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("--site", required=True, metavar="CODE", help="the site's code")
        action = parser.add_mutually_exclusive_group(required=True)
        action.add_argument("--name", help="make a token for this feed")
        action.add_argument("--revoke", metavar="NAME", help="revoke this feed's token")

    def handle(self, *args: Any, **options: Any) -> None:
        site = Site.objects.filter(code=options["site"]).first()
        if site is None:
            codes = ", ".join(Site.objects.order_by("code").values_list("code", flat=True))
            raise CommandError(f"No site has code {options['site']!r} (codes: {codes or 'none'}).")
        now = timezone.now()
        if options["revoke"]:
            live = FeedToken.objects.filter(site=site, revoked_at__isnull=True)
            token = live.filter(name=options["revoke"]).first()
            if token is None:
                raise CommandError(
                    f"Site {site.code} has no live feed token {options['revoke']!r}."
                )
            feed_token_revoke(token=token, now=now)
            self.stdout.write(f"Revoked feed token {token.name} of site {site.code}.")
            return
        name = options["name"].strip()
        if not name or len(name) > 60:
            raise CommandError("--name must be 1 to 60 characters.")
        try:
            made = feed_token_create(site=site, name=name, created_by=None, now=now)
        except IntegrityError:
            raise CommandError(
                f"Site {site.code} already has a live feed token {name!r}."
            ) from None
        self.stderr.write(
            f"Feed token {name} for site {site.code}. Shown once, stored only as a SHA-256: "
            "copy it into the feed's settings now."
        )
        self.stdout.write(made.secret)
