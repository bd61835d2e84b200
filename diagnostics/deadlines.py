"""Which leak-repair and initial-verification deadlines are still open: one rule for the
attention list and the alerts.

A repair deadline is met by a leak-repaired record on or after the addition; a
verification deadline by an initial verification test on or after that repair.
"""

from __future__ import annotations

import datetime as dt
from collections import defaultdict
from collections.abc import Sequence
from dataclasses import dataclass

from fleet.choices import RefrigerantEventKind
from fleet.models import RefrigerantEvent

from .models import LeakRate


@dataclass(frozen=True)
class LeakDeadline:
    """An open deadline of a stored leak rate: ``kind`` is "repair" or "verification"."""

    rate: LeakRate
    kind: str
    due_on: dt.date


def open_leak_deadlines(rates: Sequence[LeakRate]) -> list[LeakDeadline]:
    """The deadlines of ``rates`` not yet met (their events' units fetched with them:
    ``select_related("event__visit_unit")``), in one more query."""
    unit_ids = {r.event.visit_unit.unit_id for r in rates}
    done: dict[tuple[int, str], list[dt.date]] = defaultdict(list)
    for unit_id, kind, day in RefrigerantEvent.objects.filter(
        visit_unit__unit_id__in=unit_ids,
        kind__in=[RefrigerantEventKind.LEAK_REPAIRED, RefrigerantEventKind.INITIAL_VERIFICATION],
    ).values_list("visit_unit__unit_id", "kind", "occurred_on"):
        done[(unit_id, kind)].append(day)
    deadlines = []
    for rate in rates:
        unit_id = rate.event.visit_unit.unit_id
        added_on = rate.event.occurred_on
        repairs = [d for d in done[(unit_id, RefrigerantEventKind.LEAK_REPAIRED)] if d >= added_on]
        repaired_on = min(repairs, default=None)
        if rate.repair_due_on and repaired_on is None:
            deadlines.append(LeakDeadline(rate, "repair", rate.repair_due_on))
        checks_after = repaired_on or added_on
        verified = any(
            d >= checks_after for d in done[(unit_id, RefrigerantEventKind.INITIAL_VERIFICATION)]
        )
        if rate.verification_due_on and not verified:
            deadlines.append(LeakDeadline(rate, "verification", rate.verification_due_on))
    return deadlines
