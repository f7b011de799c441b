from __future__ import annotations

from typing import Any

from django.http import HttpRequest

from .access import user_role


def role(request: HttpRequest) -> dict[str, Any]:
    return {"role": user_role(getattr(request, "user", None))}
