"""Start-component risk: will this compressor fail to start soon, and why do we think so.

A compressor that will not start on a hot afternoon spoils a box of product. The signs come
before: a capacitor losing microfarads visit after visit, a start that hums at locked-rotor
current, supply voltage sagging at start, a hard-start kit fitted to get it going, start parts
replaced again and again (which points past the parts, at the compressor or the supply).
Each sign is an item with its points and its evidence; the level follows from the total.
The points are our weighting (data in ``start_risk_rules.StartRiskRules``), the limits behind
each sign cite their standard. The signs are read in ``capacitor_risk`` (the capacitors
against their rating) and ``start_events`` (the starts and the parts replaced) from the
history of ``start_history``; this module adds them up.
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import date, timedelta

from diagnostics.core.capacitor_risk import capacitor_signs
from diagnostics.core.start_events import attempt_items, replacement_items
from diagnostics.core.start_history import StartHistory
from diagnostics.core.start_risk_rules import (
    DEFAULT_START_RULES,
    RiskItem,
    RiskLevel,
    StartRiskAssessment,
    StartRiskRules,
)


def assess_start_risk_many(
    histories: Sequence[StartHistory], today: date, rules: StartRiskRules = DEFAULT_START_RULES
) -> list[StartRiskAssessment]:
    """The risk of many compressors; all capacitor slopes are fitted in one array pass."""
    since = today - timedelta(days=rules.lookback_days)
    capacitors = capacitor_signs(histories, today, rules)
    items = [
        [
            *signs.out_of_rating,
            *attempt_items(history, since, today, rules),
            *replacement_items(history, since, today, rules),
            *signs.drifting,
        ]
        for history, signs in zip(histories, capacitors, strict=True)
    ]
    projections = [signs.projected_on for signs in capacitors]
    return [
        _assessment(row_items, row_projections, rules)
        for row_items, row_projections in zip(items, projections, strict=True)
    ]


def _assessment(
    items: list[RiskItem], projections: list[date], rules: StartRiskRules
) -> StartRiskAssessment:
    score = sum(i.points for i in items)
    if score >= rules.high_from:
        level = RiskLevel.HIGH
    elif score >= rules.elevated_from:
        level = RiskLevel.ELEVATED
    else:
        level = RiskLevel.LOW
    return StartRiskAssessment(
        level=level,
        score=score,
        items=tuple(sorted(items, key=lambda i: -i.points)),
        projected_on=min(projections, default=None),
    )


def assess_start_risk(
    history: StartHistory, today: date, rules: StartRiskRules = DEFAULT_START_RULES
) -> StartRiskAssessment:
    """Score the start-component risk of one compressor from its history up to ``today``."""
    return assess_start_risk_many([history], today, rules)[0]
