"""The request type every view takes: Django's, with django-htmx's details (``request.htmx``)."""

from __future__ import annotations

from django.http import HttpRequest
from django_htmx.middleware import HtmxDetails


class HtmxHttpRequest(HttpRequest):
    htmx: HtmxDetails
