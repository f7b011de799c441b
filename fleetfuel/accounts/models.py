"""Who uses fleetfuel: the three roles and the sites each person works at."""

from __future__ import annotations

from django.conf import settings
from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import models


class Role(models.TextChoices):
    """Roles are Django groups of these names, created by a migration."""

    MANAGER = "manager", "Fleet manager"
    MECHANIC = "mechanic", "Mechanic"
    AUDITOR = "auditor", "Auditor"


class Profile(models.Model):
    """A person's sites and work-list preferences."""

    user = models.OneToOneField(
        settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="profile"
    )
    sites = models.ManyToManyField("fleet.Site", blank=True, related_name="staff")
    work_list_subscribed = models.BooleanField("email me the daily work list", default=False)
    work_list_hour = models.PositiveSmallIntegerField(
        "send at (site local hour)",
        default=6,
        validators=[MinValueValidator(0), MaxValueValidator(23)],
    )
    work_list_days_ahead = models.PositiveSmallIntegerField(
        "list items due within (days)",
        default=7,
        validators=[MinValueValidator(1), MaxValueValidator(60)],
    )

    def __str__(self) -> str:
        return f"Profile of {self.user}"
