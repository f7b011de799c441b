from __future__ import annotations

from typing import Any

from django.http import HttpRequest
from django.utils.functional import SimpleLazyObject

from .access import model_get, site_ids_for_user, user_role


def role(request: HttpRequest) -> dict[str, Any]:
    return {"role": user_role(getattr(request, "user", None))}


def _only_depot(user: Any) -> Any:
    if user is None or not user.is_authenticated or user_role(user) is None:
        return None
    ids = site_ids_for_user(user)
    return model_get("fleet", "Site").objects.get(pk=ids[0]) if len(ids) == 1 else None


def depot(request: HttpRequest) -> dict[str, Any]:
    """``depot``: the user's one depot, for the fmt filters on pages not about one depot
    (None, meaning UTC and the default style, for someone who sees several). Read lazily:
    no query unless a template uses it."""
    user = getattr(request, "user", None)
    return {"depot": SimpleLazyObject(lambda: _only_depot(user))}
