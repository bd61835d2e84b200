"""The fleet records: who we serve, where, which systems, and what was found on each visit.

Everything is stored in SI (degrees C, kelvin for differences, kPa gauge as measured,
kg, A, V, uF); the API converts at the edge. Impossible values are refused twice: by
field validators (messages naming the field) and by database constraints.

Django reads the app's models from this package; they live by job in ``sites``,
``units``, ``visits``, ``components``, ``readings`` and ``audit``, and are imported from
here (``from fleet.models import Unit``). ``validate_time_zone`` is named here by the
first migration.
"""

from __future__ import annotations

from .audit import AuditAction, AuditEntry
from .components import PART_FIELDS, Component
from .documents import UnitDocument
from .readings import ReadingSet, RefrigerantEvent
from .sites import Customer, Site, validate_time_zone
from .units import UNIT_PLATE_FIELDS, Refrigerant, Unit
from .visits import Visit, VisitUnit

__all__ = [
    "PART_FIELDS",
    "UNIT_PLATE_FIELDS",
    "AuditAction",
    "AuditEntry",
    "Component",
    "Customer",
    "ReadingSet",
    "Refrigerant",
    "RefrigerantEvent",
    "Site",
    "Unit",
    "UnitDocument",
    "Visit",
    "VisitUnit",
    "validate_time_zone",
]
