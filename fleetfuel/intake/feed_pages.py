"""The manager's page of feed tokens: list, make (the secret shown once), revoke."""

from __future__ import annotations

from django import forms
from django.contrib import messages
from django.db import IntegrityError
from django.http import HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.utils import timezone
from django.views.decorators.cache import never_cache
from django.views.decorators.http import require_http_methods, require_POST

from fleetfuel.accounts.access import role_required, site_ids_for_user, sites_for_user
from fleetfuel.accounts.models import Role

from .feed_tokens import feed_token_create, feed_token_revoke, feed_tokens_for_sites
from .models import FeedToken


class FeedTokenForm(forms.Form):
    site = forms.ModelChoiceField(queryset=None, empty_label=None)  # type: ignore[arg-type]
    name = forms.CharField(
        max_length=60, help_text="Which feed will use it, e.g. the gateway at the workshop."
    )

    def __init__(self, *args: object, user: object, **kwargs: object) -> None:
        super().__init__(*args, **kwargs)  # type: ignore[arg-type]
        self.fields["site"].queryset = sites_for_user(user).order_by("name")  # type: ignore[attr-defined]


@role_required(Role.MANAGER)
@never_cache
@require_http_methods(["GET", "POST"])
def feed_tokens(request: HttpRequest) -> HttpResponse:
    form = FeedTokenForm(request.POST or None, user=request.user)
    secret = None
    if request.method == "POST" and form.is_valid():
        try:
            made = feed_token_create(
                site=form.cleaned_data["site"],
                name=form.cleaned_data["name"].strip(),
                created_by=request.user,
                now=timezone.now(),
            )
        except IntegrityError:
            form.add_error("name", "This site already has a live feed token of that name.")
        else:
            secret, form = made, FeedTokenForm(user=request.user)
    tokens = feed_tokens_for_sites(site_ids_for_user(request.user))
    return render(
        request, "intake/feed_tokens.html", {"form": form, "made": secret, "tokens": tokens}
    )


@role_required(Role.MANAGER)
@require_POST
def feed_token_revoke_view(request: HttpRequest, pk: int) -> HttpResponse:
    token = get_object_or_404(FeedToken, pk=pk, site_id__in=site_ids_for_user(request.user))
    feed_token_revoke(token=token, now=timezone.now())
    messages.success(request, f"Feed token {token.name} revoked: the feed can no longer post.")
    return redirect("intake:feed_tokens")
