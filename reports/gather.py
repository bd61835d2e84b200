"""One site-month turned into plain data, judged: the queries of ``queries`` and ``events``
(a fixed number, whatever the number of units, visits or readings), grouped per unit in
plain loops and judged by ``summary``. Nothing past this module holds an ORM object, so the
charts and the templates cannot trigger a query.
"""

from __future__ import annotations

from collections.abc import Mapping
from datetime import date, datetime
from statistics import fmean
from typing import Any
from zoneinfo import ZoneInfo

from diagnostics.core import appliance_leaks, leaks, site_leaks
from diagnostics.core.scoring import SCORING_TABLE
from diagnostics.core.types import Caution
from fleet import choices

from . import events, overview, queries, summary, words
from .data import (
    Check,
    ComponentRow,
    FindingRow,
    MetricRow,
    SiteMonth,
    UnitInfo,
    UnitMonth,
)
from .months import Month
from .queries import choice_labels, history_point

#: Months of history the trend charts cover, the report month included.
WINDOW_MONTHS = 12


def _mean(values: list[float | None]) -> float | None:
    present = [v for v in values if v is not None]
    return fmean(present) if present else None


# --- per unit, in plain loops -------------------------------------------------------------------


def _one_per_visit(rows: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """The as-found reading of each visit (else its first): trends compare like with like."""
    chosen: dict[str, dict[str, Any]] = {}
    for row in rows:
        ref = row["visit_unit__visit__reference"]
        kept = chosen.get(ref)
        if kept is None or (
            kept["stage"] != choices.Stage.AS_FOUND and row["stage"] == choices.Stage.AS_FOUND
        ):
            chosen[ref] = row
    return sorted(chosen.values(), key=lambda r: (r["taken_at"], r["id"]))


def _metric_row(m: dict[str, Any]) -> MetricRow:
    rule = SCORING_TABLE.get(m["name"])
    return MetricRow(
        name=m["name"],
        label=rule.label if rule else m["name"].replace("_", " "),
        measured=m["measured"],
        target=m["target"],
        low=m["low"],
        high=m["high"],
        deviation=m["deviation"],
        unit=m["unit"],
        status=m["status"],
        points_lost=m["points_lost"],
        reason=m.get("reason", ""),
    )


def _finding_row(f: dict[str, Any]) -> FindingRow:
    return FindingRow(
        code=f["code"],
        title=f["title"],
        evidence=tuple(f["evidence"]),
        confidence=f["confidence"],
        advice=f["advice"],
        alternatives=tuple(f.get("alternatives") or ()),
        deciding_check=f.get("deciding_check") or "",
    )


def _check(row: dict[str, Any], details: Mapping[str, Any], tz: ZoneInfo, unit: UnitInfo) -> Check:
    """A month's diagnosed reading set. An ice machine's box metrics are left out: it is
    judged on its circuit and electrics (``words.ICE_MACHINE_BASIS``)."""
    stage = choice_labels(choices.Stage)
    skip = words.NOT_FOR_ICE_MACHINES if unit.is_ice_machine else frozenset()
    findings = sorted(details["findings"], key=lambda f: -f["confidence"])
    return Check(
        reading_set_id=row["id"],
        visit_reference=row["visit_unit__visit__reference"],
        taken_at=row["taken_at"].astimezone(tz),
        stage=row["stage"],
        stage_label=stage.get(row["stage"], row["stage"]),
        score=row["diagnosis__score"],
        algorithm_version=row["diagnosis__algorithm_version"] or "",
        glide_choice=details["glide_choice"],
        energy_penalty_pct=row["diagnosis__energy_penalty_pct"],
        metrics=tuple(_metric_row(m) for m in details["metrics"] if m["name"] not in skip),
        findings=tuple(_finding_row(f) for f in findings),
        cautions=tuple(Caution(c["code"], c["text"]) for c in details["cautions"]),
        compressor_running=row["compressor_running"],
        mean_amps=_mean(
            [row["compressor_amps_1"], row["compressor_amps_2"], row["compressor_amps_3"]]
        ),
        mean_volts=_mean([row["supply_volts_1"], row["supply_volts_2"], row["supply_volts_3"]]),
    )


def _component_rows(parts: list[Mapping[str, Any]], first: date, last: date) -> list[ComponentRow]:
    """Parts fitted or taken out in the window; the original equipment is not news."""
    labels = choice_labels(choices.ComponentKind)
    out = []
    for p in parts:
        fitted = p["installed_on"] is not None and first <= p["installed_on"] <= last
        removed = p["removed_on"] is not None and first <= p["removed_on"] <= last
        if fitted or removed:
            out.append(
                ComponentRow(
                    kind=p["kind"],
                    kind_label=labels.get(p["kind"], p["kind"]),
                    installed_on=p["installed_on"],
                    removed_on=p["removed_on"],
                    reason=p["reason"],
                    rating_uf_min=p["rating_uf_min"],
                    rating_uf_max=p["rating_uf_max"],
                    visit_reference=p["changed_on_visit__reference"] or "",
                )
            )
    return out


def gather_site_month(site_id: int, month: Month, *, now: datetime) -> SiteMonth:
    """The site-month as plain data, in a fixed number of queries.

    Readings, visits and additions are those of the month (and the eleven before it for
    the trends); flags are those open at the month's end, or at ``now`` (the moment the
    report is made) for a month not over yet.
    """
    site = queries.site_info(site_id)
    tz = ZoneInfo(site.time_zone)
    window_start = month.shift(-(WINDOW_MONTHS - 1))
    start, month_start, end = window_start.start_in(tz), month.start_in(tz), month.end_in(tz)
    as_of = min(now, end)
    provenance: list[str] = []

    components = queries.components_by_unit(site_id)
    units = queries.units_in_month(site_id, month, components)
    readings = queries.readings_by_unit(site_id, start, end)
    details = queries.month_details(
        [r for rows in readings.values() for r in rows if r["taken_at"] >= month_start]
    )
    visits = events.visits_in(site_id, month_start, end, tz)
    additions = events.additions_by_unit(site_id, window_start.first_day, month.last_day)
    flags = events.flags_open_at(site_id, as_of, tz, provenance)

    unit_months = []
    for unit in units:
        rows = readings.get(unit.id, [])
        month_rows = [r for r in rows if r["taken_at"] >= month_start]
        checks = tuple(_check(r, details[r["id"]], tz, unit) for r in month_rows)
        history = tuple(history_point(r, tz) for r in _one_per_visit(rows))
        unit_flags = tuple(flags.get(unit.id, ()))
        unit_leaks = tuple(additions.get(unit.id, ()))
        added_month = sum(
            a.amount_kg for a in unit_leaks if month.first_day <= a.occurred_on <= month.last_day
        )
        current = summary.current_check(checks)
        as_left = summary.as_left_check(checks, current)
        health = summary.grade_unit(current, unit_flags, unit_leaks, month)
        energy = summary.energy_estimate(
            current,
            phase=unit.phase,
            tariff_per_kwh=site.tariff_per_kwh,
            currency=site.currency,
            days_in_month=month.days,
        )
        unit_months.append(
            UnitMonth(
                unit=unit,
                checks=checks,
                history=history,
                flags=unit_flags,
                leak_rates=unit_leaks,
                components=tuple(
                    _component_rows(
                        components.get(unit.id, []), window_start.first_day, month.last_day
                    )
                ),
                added_kg_month=added_month,
                current=current,
                as_left=as_left,
                health=health,
                story=summary.story_of(current, history, unit_flags, month),
                energy=energy,
                actions=summary.actions_for(
                    current, unit_flags, unit_leaks, month, today=as_of.astimezone(tz).date()
                ),
            )
        )

    totals = site_leaks.site_totals(
        [
            site_leaks.UnitAdditions(
                u.unit.id,
                u.unit.refrigerant,
                tuple(
                    appliance_leaks.RefrigerantAddition(
                        a.occurred_on,
                        a.amount_kg,
                        leaks.ExcludedReason(a.exemption) if a.exemption else None,
                    )
                    for a in u.leak_rates
                ),
            )
            for u in unit_months
        ],
        month.first_day,
        month.last_day,
    )
    all_checks = [c for u in unit_months for c in u.checks]
    return SiteMonth(
        site=site,
        month=month,
        window_start=window_start,
        as_of=as_of.astimezone(tz),
        units=tuple(unit_months),
        visits=tuple(visits),
        refrigerant=totals,
        overview=overview.overview(unit_months, visits),
        attention=overview.rank_attention(unit_months),
        algorithm_versions=tuple(sorted({c.algorithm_version for c in all_checks} - {""})),
        glide_choices=tuple(sorted({c.glide_choice for c in all_checks} - {""})),
        leak_rules=tuple(
            sorted(
                {
                    (a.rule_set, a.method)
                    for u in unit_months
                    for a in u.leak_rates
                    if a.computed and a.rule_set
                }
            )
        ),
        provenance=tuple(dict.fromkeys(provenance)),
    )
