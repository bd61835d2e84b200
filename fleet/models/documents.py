"""Files kept with a unit: its nameplate photo, wiring diagram, commissioning sheet. They
are stored through Django's storage API (files on disk by default, an S3-compatible store
by setting) and served only through a page that checks who may see the unit."""

from __future__ import annotations

import uuid

from django.conf import settings
from django.db import models

from .. import choices
from .. import reach as scope
from .units import Unit


def document_path(document: UnitDocument, filename: str) -> str:
    """Where the file is kept: by unit, under a random name (the name a user gave is kept in
    the record, never trusted as a path)."""
    suffix = filename.rsplit(".", 1)[-1].lower() if "." in filename else "bin"
    return f"units/{document.unit_id}/{uuid.uuid4().hex}.{suffix}"


class UnitDocument(models.Model):
    """One file attached to a unit. Kept with the unit's history: a unit with documents
    cannot be deleted, only retired."""

    unit = models.ForeignKey(Unit, on_delete=models.PROTECT, related_name="documents")
    kind = models.CharField(max_length=30, choices=choices.DocumentKind.choices)
    title = models.CharField(max_length=200, blank=True)
    file = models.FileField(upload_to=document_path, max_length=200)
    original_name = models.CharField(max_length=200)
    content_type = models.CharField(max_length=100)
    size_bytes = models.PositiveBigIntegerField()
    uploaded_by = models.ForeignKey(
        settings.AUTH_USER_MODEL, null=True, blank=True, on_delete=models.SET_NULL
    )
    uploaded_at = models.DateTimeField(auto_now_add=True)

    #: Who may see it: whoever sees its unit.
    reach = scope.Through(scope.units, "unit__")
    objects = scope.VisibleManager()

    class Meta:
        ordering = ["unit_id", "-uploaded_at"]
        constraints = [
            models.CheckConstraint(
                condition=models.Q(kind__in=choices.DocumentKind.values),
                name="unitdocument_kind_valid",
            )
        ]

    def __str__(self) -> str:
        return f"{self.get_kind_display()} of {self.unit.tag}"
