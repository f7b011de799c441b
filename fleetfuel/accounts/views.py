from __future__ import annotations

from django.contrib.auth.decorators import login_required
from django.core.exceptions import PermissionDenied
from django.db import connection
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect
from django.views.decorators.http import require_GET

from .access import user_role
from .models import Role

HOME_BY_ROLE = {
    Role.MANAGER: "pages:due_list",
    Role.MECHANIC: "workorders:my_work",
    Role.AUDITOR: "ledger:history",
}


@login_required
def home(request: HttpRequest) -> HttpResponse:
    """Send each person to their role's home page."""
    role = user_role(request.user)
    if role is None:
        raise PermissionDenied("Your account has no role yet; ask a fleet manager.")
    return redirect(HOME_BY_ROLE[Role(role)])


@require_GET
def healthz(request: HttpRequest) -> HttpResponse:
    """Liveness for the container health check: no login, no data, just 'the database answers'."""
    with connection.cursor() as cursor:
        cursor.execute("SELECT 1")
    return HttpResponse("ok", content_type="text/plain")
