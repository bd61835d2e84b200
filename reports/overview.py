"""The site as a whole: which units need attention first, and the first page's overview
(grades counted, scores, open flags, visits, the energy money at stake)."""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterable, Sequence
from statistics import fmean

from .data import HEALTH_LABELS, HEALTH_ORDER, SiteOverview, UnitMonth, VisitInfo


def rank_attention(units: Iterable[UnitMonth]) -> tuple[UnitMonth, ...]:
    """Units needing attention or watching, most urgent first.

    Urgency: the grade, then the most severe open flag, then the nearest projected date,
    then the lowest score.
    """
    chosen = [
        u for u in units if u.health.status in ("act", "watch") or u.trend.direction == "worse"
    ]

    def key(u: UnitMonth) -> tuple:
        top = max((f.severity_rank for f in u.flags), default=0)
        dates = [f.projected_on for f in u.flags if f.projected_on is not None]
        soonest = min(dates).toordinal() if dates else 10**7
        score = u.current.score if u.current and u.current.score is not None else 101.0
        return (u.health.order, -top, soonest, score, u.unit.tag)

    return tuple(sorted(chosen, key=key))


#: The first page lists the costliest units only; the rest are summed in one line.
ENERGY_ROWS = 8


def overview(units: Sequence[UnitMonth], visits: Sequence[VisitInfo]) -> SiteOverview:
    counts = Counter(u.health.status for u in units)
    scores = [u.current.score for u in units if u.current and u.current.score is not None]
    # The units priced: each one's tag and its estimate.
    estimated = [(u.unit.tag, u.energy) for u in units if u.energy and u.energy.cost]
    by_kind = Counter(v.kind_label for v in visits if v.status != "cancelled")
    priced = sorted(
        (
            (
                tag,
                energy.penalty_percent,
                energy.extra_kwh_per_month or 0.0,
                energy.extra_cost_per_month or 0.0,
            )
            for tag, energy in estimated
        ),
        key=lambda row: (-row[3], row[0]),
    )
    top, rest = priced[:ENERGY_ROWS], priced[ENERGY_ROWS:]
    return SiteOverview(
        unit_count=len(units),
        checked_count=sum(1 for u in units if u.current is not None),
        counts=tuple((s, HEALTH_LABELS[s], counts.get(s, 0)) for s in HEALTH_ORDER),
        mean_score=fmean(scores) if scores else None,
        lowest_score=min(scores) if scores else None,
        open_flag_count=sum(len(u.flags) for u in units),
        not_checked=tuple(u.unit.tag for u in units if u.current is None),
        visits_by_kind=tuple(sorted(by_kind.items())),
        energy_cost_per_month=sum(e.extra_cost_per_month or 0.0 for _, e in estimated),
        energy_kwh_per_month=sum(e.extra_kwh_per_month or 0.0 for _, e in estimated),
        energy_units_estimated=len(estimated),
        energy_units_not_estimated=tuple(
            u.unit.tag for u in units if u.energy is not None and u.energy.cost is None
        ),
        energy_top=tuple(top),
        energy_rest_count=len(rest),
        energy_rest_cost=sum(row[3] for row in rest),
    )
