"""The telematics feed's endpoint, ``POST /api/v1/telematics/``: a thin view over
feed_items (reading the body), feed_tokens (who is posting, how often) and feed_actions."""

from __future__ import annotations

from typing import Any

from django.http import HttpRequest, HttpResponse, JsonResponse
from django.utils import timezone
from django.views.decorators.cache import never_cache
from django.views.decorators.csrf import csrf_exempt

from .feed_actions import feed_batch_apply
from .feed_items import MAX_BODY_BYTES, MAX_ITEMS, BodyError, body_items
from .feed_tokens import feed_rate_check, feed_token_from_header


def _error(status: int, message: str, **headers: str) -> JsonResponse:
    response = JsonResponse({"error": message}, status=status)
    for name, value in headers.items():
        response[name.replace("_", "-")] = value
    return response


def _body_length(request: HttpRequest) -> int:
    try:
        return int(request.META.get("CONTENT_LENGTH") or 0)
    except ValueError:
        return 0


# A machine posts here with a bearer token, not a browser with a session: the one view
# exempt from CSRF (a token in a header is not sent by a browser on its own).
@csrf_exempt
@never_cache
def telematics(request: HttpRequest) -> HttpResponse:
    if request.method != "POST":
        return _error(405, "Only POST is allowed here.", Allow="POST")
    header = request.headers.get("Authorization", "")
    token = feed_token_from_header(header)
    if token is None:
        challenge = 'Bearer realm="fleetfuel"'
        if header:
            challenge += ', error="invalid_token"'
        return _error(401, "A valid feed token is required.", WWW_Authenticate=challenge)
    now = timezone.now()
    retry_after = feed_rate_check(token_id=token.pk, now=now)
    if retry_after is not None:
        return _error(429, "Too many requests for this token.", Retry_After=str(retry_after))
    too_big = f"At most {MAX_BODY_BYTES:,} bytes and {MAX_ITEMS:,} items per request"
    if _body_length(request) > MAX_BODY_BYTES:
        return _error(413, f"{too_big}; this body has {_body_length(request):,} bytes.")
    if request.content_type not in ("application/json", ""):
        return _error(415, f"Send application/json, not {request.content_type}.")
    try:
        raw_items: list[Any] = body_items(request.body)
    except BodyError as exc:
        return _error(400, str(exc))
    if len(raw_items) > MAX_ITEMS:
        return _error(413, f"{too_big}; this one has {len(raw_items):,} items.")
    results = feed_batch_apply(token=token, raw_items=raw_items, now=now)
    return JsonResponse({"results": results})
