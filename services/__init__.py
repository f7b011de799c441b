"""The trade's knowledge as pure Python: no Django, no I/O, no clock, no randomness.

Every function takes plain values (numbers, dates, the dataclasses in
:mod:`services.common`) and returns plain values, so that the Django apps,
the Celery tasks and the management commands all share one computation and
the tests can check it against published tables in milliseconds.
"""
