"""Turn the limits table into field validators and check constraints."""

from __future__ import annotations

from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import models

from .limits import Limit


def limit_validators(limit: Limit) -> list:
    """Validators whose messages say which bound was crossed and why."""
    return [
        MinValueValidator(limit.low, message=f"must be at least {limit.low:g} ({limit.why})"),
        MaxValueValidator(limit.high, message=f"must be at most {limit.high:g} ({limit.why})"),
    ]


def limit_constraints(prefix: str, limits: dict[str, Limit]) -> list[models.CheckConstraint]:
    """One check constraint per bounded column; NULL (not measured) always passes."""
    return [
        models.CheckConstraint(
            condition=models.Q(**{f"{name}__isnull": True})
            | models.Q(**{f"{name}__gte": limit.low, f"{name}__lte": limit.high}),
            name=f"{prefix}_{name}_in_range",
        )
        for name, limit in limits.items()
    ]
