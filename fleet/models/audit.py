"""The stored audit trail of the records (``fleet.audit`` records each change in it)."""

from __future__ import annotations

from django.conf import settings
from django.db import models
from django.db.models import Q

from .. import reach as scope


class AuditAction(models.TextChoices):
    CREATED = "created", "Created"
    CHANGED = "changed", "Changed"
    MOVED = "moved", "Status changed"
    DELETED = "deleted", "Deleted"


class AuditEntry(models.Model):
    """Who created, changed, moved or deleted a record (a visit, reading set or refrigerant
    event; a customer, site, unit or part, whose entries have no visit), and what changed, so
    an office edit after submission can always be told from the original.

    ``changes`` maps each field to ``[old, new]`` (SI, as stored); a creation lists the stored
    values as ``[null, new]``. The record is named by content type and id rather than by a
    foreign key, so the trail outlives a deleted record.
    """

    at = models.DateTimeField()
    actor = models.ForeignKey(
        settings.AUTH_USER_MODEL,
        null=True,
        blank=True,
        on_delete=models.PROTECT,
        related_name="audit_entries",
    )
    action = models.CharField(max_length=10, choices=AuditAction.choices)
    record_type = models.ForeignKey(
        "contenttypes.ContentType", on_delete=models.PROTECT, related_name="+"
    )
    record_id = models.PositiveBigIntegerField()
    #: The visit the record belongs to, kept as a plain id so the trail survives deletion.
    visit_id = models.PositiveBigIntegerField(null=True, blank=True)
    changes = models.JSONField(default=dict, blank=True)
    note = models.TextField(blank=True)

    #: Who may see it: whoever sees its visit.
    reach = scope.Through(scope.visit_trail)
    objects = scope.VisibleManager()

    class Meta:
        ordering = ["at", "id"]
        verbose_name_plural = "audit entries"
        indexes = [
            models.Index(fields=["record_type", "record_id"]),
            models.Index(fields=["visit_id", "at"]),
        ]
        constraints = [
            models.CheckConstraint(
                condition=Q(action__in=AuditAction.values),
                name="auditentry_action_valid",
            ),
        ]

    def __str__(self) -> str:
        return f"{self.get_action_display()} {self.record_type.model} {self.record_id} at {self.at}"
