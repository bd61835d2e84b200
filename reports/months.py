"""A calendar month as reports name it ("2026-03"), and its bounds in a site's time zone.

A site-month runs from local midnight on the 1st to local midnight on the 1st of the next
month, in the site's own time zone: a visit at 23:30 on 31 March in Denver belongs to March
even though it is already April in UTC.
"""

from __future__ import annotations

import calendar
import re
from dataclasses import dataclass
from datetime import date, datetime, time
from zoneinfo import ZoneInfo

MONTH_PATTERN = r"\d{4}-\d{2}"
_MONTH_RE = re.compile(rf"^{MONTH_PATTERN}$")


class MonthConverter:
    """``<month:month>`` in a URL: ``YYYY-MM`` as text (the view says whether it is a month)."""

    regex = MONTH_PATTERN

    def to_python(self, value: str) -> str:
        return value

    def to_url(self, value: str) -> str:
        return value


@dataclass(frozen=True, order=True)
class Month:
    year: int
    month: int

    def __post_init__(self) -> None:
        if not 1 <= self.month <= 12 or not 1 <= self.year <= 9999:
            raise ValueError(f"no such month: {self.year:04d}-{self.month:02d}")

    @classmethod
    def parse(cls, text: str) -> Month:
        """'YYYY-MM' -> Month; ValueError for anything else (so callers can answer 404/400)."""
        if not isinstance(text, str) or not _MONTH_RE.match(text):
            raise ValueError(f"{text!r} is not a month written YYYY-MM")
        return cls(int(text[:4]), int(text[5:]))

    @classmethod
    def of(cls, day: date) -> Month:
        return cls(day.year, day.month)

    def __str__(self) -> str:
        return f"{self.year:04d}-{self.month:02d}"

    @property
    def first_day(self) -> date:
        return date(self.year, self.month, 1)

    @property
    def last_day(self) -> date:
        return date(self.year, self.month, self.days)

    @property
    def days(self) -> int:
        return calendar.monthrange(self.year, self.month)[1]

    @property
    def label(self) -> str:
        """'March 2026' (English month names, whatever the server locale)."""
        return f"{calendar.month_name[self.month]} {self.year}"

    @property
    def short_label(self) -> str:
        return f"{calendar.month_abbr[self.month]} {self.year}"

    def shift(self, months: int) -> Month:
        index = self.year * 12 + (self.month - 1) + months
        return Month(index // 12, index % 12 + 1)

    def start_in(self, tz: ZoneInfo) -> datetime:
        """Local midnight on the 1st, as an aware datetime."""
        return datetime.combine(self.first_day, time(0), tzinfo=tz)

    def end_in(self, tz: ZoneInfo) -> datetime:
        """Local midnight on the 1st of the next month (exclusive end)."""
        return self.shift(1).start_in(tz)
