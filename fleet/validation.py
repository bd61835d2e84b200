"""Turn the limits table into field validators and check constraints, and judge dates:
the range a stored date must fall in, and the window a visit may have; and the range of a
record id in a URL."""

from __future__ import annotations

import datetime as dt

from django.core.validators import MaxValueValidator, MinValueValidator
from django.db import models

from .limits import (
    RECORD_DATES,
    SERVICE_ERA,
    VISIT_BOOKING_AHEAD,
    VISIT_BOOKING_BACK,
    VISIT_WINDOW_LONGEST,
    DateRange,
    Limit,
)


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


def date_problem(value: dt.date, dates: DateRange) -> str | None:
    """What is wrong with a day (or a time's day) outside ``dates``, or None."""
    if value in dates:
        return None
    return f"must fall between {dates.first.isoformat()} and {dates.last.isoformat()} ({dates.why})"


def stored_date_problem(name: str, value: dt.date | None, dates: DateRange = RECORD_DATES) -> str:
    """For a stored row a fleet-wide job reads: "installed_on 9999-12-31 out of range" when
    the date (or a time's day) cannot be worked with (date arithmetic on it may overflow),
    else ""."""
    if value is None or value in dates:
        return ""
    day = value.date() if isinstance(value, dt.datetime) else value
    return f"{name} {day.isoformat()} out of range"


def visit_window_problems(start: dt.datetime, end: dt.datetime) -> dict[str, str]:
    """The window every visit must have, wherever it is written (pages, API, admin)."""
    problems = {
        name: f"must fall in the years {SERVICE_ERA.first.year} to {SERVICE_ERA.last.year}"
        for name, value in (("window_start", start), ("window_end", end))
        if value not in SERVICE_ERA
    }
    if problems:
        return problems
    if end <= start:
        return {"window_end": "must be after the start of the window"}
    if end - start > VISIT_WINDOW_LONGEST:
        return {
            "window_end": f"must be at most {_span(VISIT_WINDOW_LONGEST)} after the start "
            "(book longer work as one visit per trip)"
        }
    return {}


def booking_problems(start: dt.datetime, today: dt.date) -> dict[str, str]:
    """The range the office pages book in: not further back than the service records kept,
    not further ahead than the longest maintenance interval."""
    first, last = today - VISIT_BOOKING_BACK, today + VISIT_BOOKING_AHEAD
    if not first <= start.date() <= last:
        return {
            "window_start": f"must fall between {first:%-d %b %Y} and {last:%-d %b %Y} "
            f"(at most {_span(VISIT_BOOKING_BACK)} back and {_span(VISIT_BOOKING_AHEAD)} ahead)"
        }
    return {}


def _span(length: dt.timedelta) -> str:
    days = length.days
    if days >= 365:
        return f"{round(days / 365)} years"
    return f"{days} days"


def record_date_errors(record: models.Model, names: tuple[str, ...]) -> dict[str, str]:
    """A model's ``clean()`` errors for its dates outside ``RECORD_DATES``."""
    errors = {}
    for name in names:
        value = getattr(record, name)
        problem = None if value is None else date_problem(value, RECORD_DATES)
        if problem:
            errors[name] = problem
    return errors


#: The largest id a record can have: the top of a 64-bit signed integer, which PostgreSQL's
#: bigint and SQLite's INTEGER both hold. A larger number names no record.
MAX_RECORD_ID = 2**63 - 1


class RecordIdConverter:
    """``<id:pk>`` in a URL: a record id from 1 to ``MAX_RECORD_ID``. Anything larger does
    not match, so it is a 404 like any id that names no record, instead of reaching the
    database as a number it cannot hold (SQLite refuses it with an error)."""

    regex = "[0-9]+"

    def to_python(self, value: str) -> int:
        number = int(value)  # a string of thousands of digits is a ValueError too
        if not 1 <= number <= MAX_RECORD_ID:
            raise ValueError(f"{value} is not a record id")
        return number

    def to_url(self, value: int) -> str:
        return str(value)


#: The largest file attached to a unit: a phone's photo or a scanned diagram fits easily.
DOCUMENT_MAX_BYTES = 20 * 1024 * 1024
#: The kinds of file a unit keeps, told by their first bytes (never by the name or the
#: type the browser claims): JPEG, PNG and PDF.
DOCUMENT_SIGNATURES = (
    (b"\xff\xd8\xff", "image/jpeg"),
    (b"\x89PNG\r\n\x1a\n", "image/png"),
    (b"%PDF-", "application/pdf"),
)


def document_type(head: bytes, size: int) -> tuple[str | None, str | None]:
    """The content type of a file from its first bytes and its size, or why it is refused."""
    if size == 0:
        return None, "the file is empty"
    if size > DOCUMENT_MAX_BYTES:
        return None, f"the file is over {DOCUMENT_MAX_BYTES // (1024 * 1024)} MB"
    for signature, content_type in DOCUMENT_SIGNATURES:
        if head.startswith(signature):
            return content_type, None
    return None, "keep a photo (JPEG or PNG) or a PDF"
