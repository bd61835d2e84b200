"""The signs of start trouble in a compressor's starts and repairs.

Starts that hum at locked-rotor current, starts called for that never came, supply voltage
sagging at start (NEMA MG-1 tolerance), a hard-start kit fitted, start parts replaced again and
again (which points past the parts, at the compressor or the supply).
"""

from __future__ import annotations

from datetime import date

from diagnostics.core import electrical
from diagnostics.core.start_history import StartComponent, StartHistory
from diagnostics.core.start_risk_rules import RiskItem, StartRiskRules

_START_PARTS = (
    StartComponent.RUN_CAPACITOR,
    StartComponent.START_CAPACITOR,
    StartComponent.START_RELAY,
)


def _capped(count: int, per_event: float, rules: StartRiskRules) -> float:
    return min(count * per_event, rules.max_points_per_sign)


def attempt_items(
    history: StartHistory, since: date, today: date, rules: StartRiskRules
) -> list[RiskItem]:
    """The signs in the starts watched from ``since`` to ``today``: locked rotor, failed
    starts, low voltage at start."""
    attempts = [a for a in history.start_attempts if since <= a.observed_on <= today]
    items: list[RiskItem] = []
    lra = history.lra_a
    locked = [
        a
        for a in attempts
        if not a.started
        and lra is not None
        and a.peak_amps is not None
        and a.peak_amps >= rules.locked_rotor_fraction * lra
    ]
    failed = [a for a in attempts if not a.started and a not in locked and a.called is True]
    # Only a real start says anything about the voltage at start: a watched start, a locked
    # rotor or a failed call; an off-cycle compressor's supply is the idle line voltage.
    starts = [a for a in attempts if a.started or a in locked or a in failed]
    if locked:
        worst = max(a.peak_amps or 0.0 for a in locked)
        items.append(
            RiskItem(
                "locked_rotor",
                f"{len(locked)} start(s) drew near locked-rotor current without starting "
                f"(up to {worst:.1f} A, LRA {lra:.1f} A)",
                _capped(len(locked), rules.points_locked_rotor, rules),
                max(a.observed_on for a in locked),
                (("peak_amps", worst, "A"), ("lra", float(lra or 0.0), "A")),
            )
        )
    if failed:
        items.append(
            RiskItem(
                "failed_start",
                f"{len(failed)} failed start(s) in the last {rules.lookback_days} days",
                _capped(len(failed), rules.points_failed_start, rules),
                max(a.observed_on for a in failed),
                (("count", float(len(failed)), "1"),),
            )
        )
    if history.nameplate_volts is not None:
        low, _ = electrical.voltage_tolerance_band(
            history.nameplate_volts, history.nameplate_volts_max, rules.voltage_tolerance_pct
        )
        sagging = [a for a in starts if a.volts_at_start is not None and a.volts_at_start < low]
        if sagging:
            lowest = min(a.volts_at_start or 0.0 for a in sagging)
            items.append(
                RiskItem(
                    "low_voltage_at_start",
                    f"supply fell to {lowest:.0f} V at start, below {low:.0f} V "
                    f"({rules.voltage_tolerance_pct:.0f} % under nameplate)",
                    _capped(len(sagging), rules.points_low_voltage, rules),
                    max(a.observed_on for a in sagging),
                    (("lowest_volts", lowest, "V"), ("limit_volts", low, "V")),
                )
            )
    return items


def replacement_items(
    history: StartHistory, since: date, today: date, rules: StartRiskRules
) -> list[RiskItem]:
    """The signs in the parts replaced: a hard-start kit fitted, start parts replaced again
    and again since ``since``."""
    items: list[RiskItem] = []
    kits = [r for r in history.replacements if r.component is StartComponent.HARD_START_KIT]
    if kits:
        fitted = max(r.replaced_on for r in kits)
        items.append(
            RiskItem(
                "hard_start_kit",
                f"a hard-start kit was fitted on {fitted.isoformat()}: it gets a weak start "
                "going but can hide a failing compressor or a low supply",
                rules.points_hard_start_kit,
                fitted,
            )
        )
    recent = [
        r
        for r in history.replacements
        if r.component in _START_PARTS and since <= r.replaced_on <= today
    ]
    if len(recent) >= rules.repeat_replacements:
        parts = sorted({r.component.value.replace("_", " ") for r in recent})
        items.append(
            RiskItem(
                "repeat_replacements",
                f"{len(recent)} start components replaced in the last {rules.lookback_days} "
                f"days ({', '.join(parts)})",
                rules.points_repeat_replacements,
                max(r.replaced_on for r in recent),
                (("count", float(len(recent)), "1"),),
            )
        )
    return items
