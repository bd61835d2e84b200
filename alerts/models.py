"""What was alerted, to whom and how, and what each person wants to be told.

An event's ``key`` names what it is about (a visit's unit with a fault, a flag, a leak
rate's deadline) and is unique: whatever the schedulers and retries, nothing alerts twice.
A delivery is one person's share of one event, also unique, and records whether it went at
once or waits for the digest.
"""

from __future__ import annotations

from django.conf import settings
from django.db import models

from fleet.models import Unit


class AlertKind(models.TextChoices):
    URGENT_FAULT = "urgent_fault", "Urgent fault found on a visit"
    FLAG_OPENED = "flag_opened", "Flag opened"
    LEAK_DEADLINE = "leak_deadline", "Leak-repair deadline near"


class Way(models.TextChoices):
    """How a person hears of a kind of alert."""

    IMMEDIATE = "immediate", "E-mail at once (then the daily digest for the same unit)"
    DIGEST = "digest", "In the daily digest"
    OFF = "off", "Not at all"


class AlertEvent(models.Model):
    key = models.CharField(max_length=80, unique=True)
    kind = models.CharField(max_length=20, choices=AlertKind.choices)
    unit = models.ForeignKey(Unit, on_delete=models.CASCADE, related_name="alert_events")
    title = models.CharField(max_length=200)
    detail = models.TextField(blank=True)
    happened_at = models.DateTimeField()
    webhook_sent_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["-happened_at"]

    def __str__(self) -> str:
        return self.title


class AlertChoice(models.Model):
    """One person's choices; without a row, the defaults of the fields hold."""

    user = models.OneToOneField(
        settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="alert_choice"
    )
    urgent_fault = models.CharField(max_length=10, choices=Way.choices, default=Way.IMMEDIATE)
    flag_opened = models.CharField(max_length=10, choices=Way.choices, default=Way.DIGEST)
    leak_deadline = models.CharField(max_length=10, choices=Way.choices, default=Way.IMMEDIATE)

    def __str__(self) -> str:
        return f"alert choices of {self.user}"

    def way(self, kind: str) -> str:
        value: str = getattr(self, kind)
        return value


class AlertDelivery(models.Model):
    event = models.ForeignKey(AlertEvent, on_delete=models.CASCADE, related_name="deliveries")
    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="+")
    way = models.CharField(
        max_length=10, choices=[(Way.IMMEDIATE, "at once"), (Way.DIGEST, "digest")]
    )
    day = models.DateField(help_text="The day it was decided (TIME_ZONE).")
    sent_at = models.DateTimeField(null=True, blank=True)
    #: "unit:kind" on an immediate delivery, empty (NULL) on a digest one: the database lets
    #: a person have one immediate e-mail a day per unit and kind, so two workers delivering
    #: two events of one unit at the same instant cannot both send at once.
    flood_key = models.CharField(max_length=60, null=True, blank=True, editable=False)

    class Meta:
        verbose_name_plural = "alert deliveries"
        constraints = [
            models.UniqueConstraint(fields=["event", "user"], name="alertdelivery_once_per_user"),
            models.UniqueConstraint(
                fields=["user", "day", "flood_key"], name="alertdelivery_one_immediate_a_day"
            ),
        ]

    def __str__(self) -> str:
        return f"{self.event} to {self.user} ({self.way})"

    @staticmethod
    def flood_key_of(event: AlertEvent) -> str:
        return f"{event.unit_id}:{event.kind}"
