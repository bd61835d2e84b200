"""What is printed on a piece of equipment's plate: who made it, its model and its serial
number. Units and their parts both carry it, so one search finds either by what a
technician reads off the plate."""

from __future__ import annotations

from django.db import models


class Nameplate(models.Model):
    """Make, model and serial number as printed (blank when not read yet)."""

    make = models.CharField(max_length=100, blank=True, help_text="The manufacturer.")
    model_number = models.CharField(max_length=100, blank=True)
    serial_number = models.CharField(max_length=100, blank=True, db_index=True)

    class Meta:
        abstract = True
