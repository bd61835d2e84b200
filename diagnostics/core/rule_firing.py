"""Which rules fire on a batch and with what confidence, and the signals behind one that fired.

Everything runs on numpy boolean arrays, so one pass judges a whole batch; the signals behind a
fired rule (its evidence) are listed only when a single diagnosis is read.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from diagnostics.core.findings import MAX_CONFIDENCE, RULES, Rule

BoolArray = NDArray[np.bool_]


@dataclass(frozen=True)
class RuleResult:
    """Which rules fired on each row (bit i = ``RULES[i]``) and with what confidence."""

    mask: NDArray[np.uint32]
    confidence: NDArray[np.float64]  # shape (len(RULES), n); 0 where the rule did not fire


def evaluate(signals: Mapping[str, BoolArray], n: int) -> RuleResult:
    """Run every rule over the batch's signals."""
    mask = np.zeros(n, dtype=np.uint32)
    confidence = np.zeros((len(RULES), n), dtype=np.float64)
    false = np.zeros(n, dtype=bool)

    def sig(name: str) -> BoolArray:
        return signals.get(name, false)

    for bit, rule in enumerate(RULES):
        fired = np.zeros(n, dtype=bool)
        for trigger in rule.triggers:
            names = sorted(trigger)
            together = sig(names[0]).copy()
            for name in names[1:]:
                together &= sig(name)
            fired |= together
        for name in rule.excluding:
            fired &= ~sig(name)
        if not fired.any():
            continue
        support = np.zeros(n, dtype=np.int8)
        for name in rule.supporting:
            support += sig(name)
        step = (MAX_CONFIDENCE - rule.base_confidence) / max(len(rule.supporting), 1)
        row = confidence[bit]
        np.multiply(support, step, out=row)
        row += rule.base_confidence
        row[~fired] = 0.0
        mask |= fired.astype(np.uint32) << np.uint32(bit)
    return RuleResult(mask, confidence)


def rules_in_mask(mask: int) -> tuple[Rule, ...]:
    """The rules whose bits are set in one row's mask."""
    return tuple(rule for bit, rule in enumerate(RULES) if mask >> bit & 1)


#: A stronger signal -> the weaker ones it says already (so evidence is never listed twice).
SUBSUMES: dict[str, tuple[str, ...]] = {
    "td_very_high": ("td_high", "td_not_high"),
    "td_high": ("td_not_high",),
    "split_very_high": ("split_high",),
    "sh_very_low": ("sh_low",),
    "sh_ok": ("sh_not_high",),
    "sh_low": ("sh_not_high",),
    "sc_low": ("sc_not_high",),
    "sc_high": ("sc_not_low",),
    "warm_but_fed": ("box_warm",),
    "locked_rotor": ("called_not_running",),
}


def signals_behind(rule: Rule, row_signals: Mapping[str, bool]) -> tuple[str, ...]:
    """The signal names that justify a fired rule on one row, triggers first, each piece of
    evidence once (a signal said by a stronger one that holds is left out)."""
    names: list[str] = []
    for trigger in rule.triggers:
        if all(row_signals.get(s, False) for s in trigger):
            names.extend(sorted(trigger))
            break
    for name in rule.supporting:
        if row_signals.get(name, False) and name not in names:
            names.append(name)
    said = {weaker for name in names for weaker in SUBSUMES.get(name, ())}
    return tuple(name for name in names if name not in said)
