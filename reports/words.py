"""Rimewatch's own words for what it judges, kept in one place for the pages and the report.

The office pages (``fleet/templatetags/rimewatch.py``) and the monthly report
(``reports/summary.py`` and its template) both read these tables, so a unit's condition, a
finding's evidence, a reading against its aim and the work a manager is asked to approve
are said the same way everywhere. Nothing here touches the database or Django; the rules
that decide a condition live in ``reports/summary.py`` and only name these words.

The API keeps its own contract values (``ok``, ``watch``, ``fault``; numeric confidence):
these words are how people read them, not new states.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from diagnostics.core import findings as core_findings

# --- a unit's condition ---------------------------------------------------------------------


@dataclass(frozen=True)
class Condition:
    """One word for a unit's condition: the same on a badge, in a table and in a sentence."""

    key: str
    label: str
    symbol: str
    #: The style hook (page badge modifier); the report styles by ``key``.
    modifier: str


#: The conditions, most urgent first. ``unjudged``: a check whose readings were too few to
#: score; ``unseen``: no check at all in the period.
CONDITIONS: dict[str, Condition] = {
    c.key: c
    for c in (
        Condition("act", "Needs attention", "\u25c6", "bad"),
        Condition("watch", "Keep an eye on", "\u25c7", "warn"),
        Condition("unjudged", "Not enough readings to judge", "\u2013", "none"),
        Condition("unseen", "Not checked this month", "\u2013", "none"),
        Condition("sound", "Healthy", "\u2714", "good"),
    )
}
#: Order of urgency: lower sorts first.
CONDITION_ORDER: dict[str, int] = {key: i for i, key in enumerate(CONDITIONS)}
#: What a score is called wherever it is printed.
SCORE_NAME = "check score"


# --- how much evidence stands behind a finding ----------------------------------------------


def evidence_strength(signs: int) -> str:
    """A finding's weight told by the signs that agree on it, not as a probability.

    ``signs`` is the number of separate observations behind the finding (its evidence lines).
    """
    if signs <= 0:
        return "no sign recorded"
    if signs == 1:
        return "a single sign"
    if signs == 2:
        return "some evidence: 2 signs agree"
    return f"strong evidence: {signs} signs agree"


#: Finding code -> its title, as the diagnostics core names it.
FINDING_TITLES: dict[str, str] = {rule.code: rule.title for rule in core_findings.RULES}


def finding_name(code: str) -> str:
    """A finding code in words: its title where the core names it, else the code spelt out."""
    return FINDING_TITLES.get(code) or code.replace("_", " ")


def could_also_be(alternatives: Sequence[str] | None, deciding_check: str | None) -> str:
    """'Could also be: ... To tell them apart: ...' for a finding the readings cannot single
    out; empty when the finding names no alternative."""
    if not alternatives:
        return ""
    names = "; ".join(finding_name(code).lower() for code in alternatives)
    text = f"Could also be: {names}."
    if deciding_check:
        text += f" To tell them apart: {deciding_check.rstrip('.')}."
    return text


# --- readings, grouped by what they tell ----------------------------------------------------


@dataclass(frozen=True)
class ReadingGroup:
    key: str
    title: str
    #: What the group answers, in one line.
    question: str
    metrics: tuple[str, ...]


READING_GROUPS: tuple[ReadingGroup, ...] = (
    ReadingGroup(
        "cooling",
        "Cooling the box",
        "Is the box held where it should be, with the coil pulling heat out as designed?",
        ("box_temp", "evaporator_td"),
    ),
    ReadingGroup(
        "charge",
        "Refrigerant charge and feed",
        "Is there the right amount of refrigerant, fed to the coil at the right rate?",
        ("superheat", "subcooling"),
    ),
    ReadingGroup(
        "heat",
        "Getting rid of heat",
        "Is the condenser shedding the heat the box gives up?",
        ("condenser_split", "head_pressure", "gas_cooler_approach", "discharge_line_temp"),
    ),
    ReadingGroup(
        "electrical",
        "Compressor and electrical",
        "Is the compressor pumping, drawing sensible current, on a sound supply?",
        (
            "compression_ratio",
            "running_amps",
            "standstill_amps",
            "current_unbalance",
            "supply_voltage",
            "voltage_unbalance",
            "run_capacitor",
            "start_capacitor",
        ),
    ),
)
OTHER_GROUP = ReadingGroup("other", "Other readings", "", ())
_GROUP_OF: dict[str, ReadingGroup] = {m: g for g in READING_GROUPS for m in g.metrics}
#: Metrics that say nothing about an ice machine, which makes ice rather than holding a box.
NOT_FOR_ICE_MACHINES = frozenset({"box_temp", "evaporator_td"})
ICE_MACHINE_BASIS = (
    "An ice machine makes ice rather than holding a box cold, so it is judged on its "
    "refrigerant circuit (superheat, subcooling, how well the condenser sheds heat) and its "
    "compressor and electrical readings, not on a box temperature."
)


def _get(item: Any, name: str) -> Any:
    """A field of a stored metric, whether a dict (page) or a dataclass (report)."""
    return item[name] if isinstance(item, Mapping) else getattr(item, name)


def group_readings(
    metrics: Iterable[Any], *, application: str = "", shown: Iterable[str] | None = None
) -> list[tuple[ReadingGroup, list[Any]]]:
    """The metrics in our groups, in the groups' order (unknown metrics last, under 'Other
    readings'); empty groups are left out, and so are the box metrics of an ice machine.
    ``shown`` limits the statuses listed (e.g. leave out what was not judged)."""
    keep = set(shown) if shown is not None else None
    placed: dict[str, list[Any]] = {}
    for m in metrics:
        name = _get(m, "name")
        if application == "ice_machine" and name in NOT_FOR_ICE_MACHINES:
            continue
        if keep is not None and _get(m, "status") not in keep:
            continue
        placed.setdefault(_GROUP_OF.get(name, OTHER_GROUP).key, []).append(m)
    order = {g.key: i for i, g in enumerate((*READING_GROUPS, OTHER_GROUP))}
    groups = {g.key: g for g in (*READING_GROUPS, OTHER_GROUP)}
    return [(groups[k], placed[k]) for k in sorted(placed, key=order.__getitem__)]


@dataclass(frozen=True)
class Verdict:
    """How a reading stands against its aim: a word, a symbol and a style hook."""

    word: str
    symbol: str
    modifier: str


def verdict(status: str, deviation: float | None = None) -> Verdict:
    """A metric's status (API values ok/watch/fault/not_scored) in words, with its direction
    where the stored deviation gives one."""
    high = deviation is not None and deviation > 0
    low = deviation is not None and deviation < 0
    if status == "ok":
        return Verdict("in range", "\u2714", "good")
    if status == "watch":
        word = "high" if high else "low" if low else "off its aim"
        return Verdict(word, "\u25b2", "warn")
    if status == "fault":
        word = "far too high" if high else "far too low" if low else "far off"
        return Verdict(word, "\u2716", "bad")
    return Verdict("not judged", "\u2013", "none")


def reading_sentence(
    measured: float | None,
    target: float | None,
    low: float | None,
    high: float | None,
    shown: Callable[[float | None], str],
    reason: str = "",
) -> str:
    """A reading against its aim in one line, values shown by ``shown`` (the display units):
    '21.6 °F; aim 9.0 °F, fine from 6.0 to 10.1 °F', 'fine up to 10.0 A', or why it was not
    judged."""
    if measured is None:
        return f"not judged: {reason}" if reason else "not measured"
    parts = [shown(measured)]
    if low is not None and high is not None:
        aim = f"aim {shown(target)}, " if target is not None else ""
        parts.append(f"{aim}fine from {shown(low)} to {shown(high)}")
    elif high is not None:
        # One edge: the target is either an ideal below it (an unbalance of 0) or a limit
        # beyond it (the cut-out a head is kept clear of).
        if target is not None and target < high:
            parts.append(f"aim {shown(target)}, fine up to {shown(high)}")
        elif target is not None and target > high:
            parts.append(f"fine up to {shown(high)}, limit {shown(target)}")
        else:
            parts.append(f"fine up to {shown(high)}")
    elif low is not None:
        parts.append(f"fine from {shown(low)} up")
    elif target is not None:
        parts.append(f"aim {shown(target)}")
    if reason:
        parts.append(f"not judged: {reason}")
    return "; ".join(parts)


# --- what a manager is asked to do ---------------------------------------------------------


@dataclass(frozen=True)
class Decision:
    """What the site's manager is asked to approve or book, in the manager's terms (the
    technician's own instructions stay with a finding's advice on the office pages).

    Decisions on one ``topic`` are one decision: a flag, a probable cause and a reading may
    all point at the start components, and the manager is asked once, in the most pressing
    words (the highest ``pressing``).
    """

    text: str
    topic: str
    pressing: int = 1
    #: Stock may be at risk: asked before anything else.
    first: bool = False


_CONDENSER = "Book a condenser clean and fan check before the hot weather"
_ELECTRICIAN = "Have an electrician check the power supply to the unit"
_START_NOW = "Approve replacing the start components now: the unit may stop cooling at any start"

#: Finding code -> the decision it calls for.
FINDING_ACTIONS: dict[str, Decision] = {
    "undercharge": Decision(
        "Approve a leak search and repair before any refrigerant is topped up", "leak"
    ),
    "overcharge": Decision(
        "Approve correcting the refrigerant charge (the surplus is recovered, not vented)",
        "charge",
    ),
    "liquid_line_restriction": Decision(
        "Approve replacing the blocked part in the liquid line (most often the filter-drier)",
        "liquid_line",
    ),
    "metering_overfeeding": Decision(
        "Book an adjustment of the expansion valve soon: liquid reaching the compressor "
        "shortens its life",
        "valve",
    ),
    "metering_underfeeding": Decision(
        "Book a check of the expansion valve; approve replacing it if it has failed", "valve"
    ),
    "low_evaporator_airflow": Decision(
        "Book a repair of the evaporator fan or defrost", "evaporator", pressing=2
    ),
    "condenser_heat_rejection": Decision(_CONDENSER, "condenser"),
    "non_condensables": Decision(
        "If a condenser clean does not bring the pressure down, approve recovering and "
        "recharging the refrigerant",
        "non_condensables",
    ),
    "weak_compressor": Decision(
        "Plan for a compressor test, and budget for a replacement if it fails", "compressor"
    ),
    "compressor_not_starting": Decision(_START_NOW, "start", pressing=3),
    "supply_problem": Decision(_ELECTRICIAN, "supply"),
    "capacitor_out_of_rating": Decision(
        "Approve replacing the capacitor that measured outside its rating", "start"
    ),
}

#: Flag kind -> the decision it calls for.
FLAG_ACTIONS: dict[str, Decision] = {
    "head_pressure_drift": Decision(
        f"{_CONDENSER}, when the rising head pressure would trip the unit",
        "condenser",
        pressing=2,
    ),
    "start_components": Decision(
        "Approve replacing the worn start components before the compressor fails to start",
        "start",
        pressing=2,
    ),
    "leak_rate": Decision(
        "Approve finding and repairing the leak; the leak-rate rules set the deadline",
        "leak",
        pressing=3,
    ),
    "maintenance_overdue": Decision("Book the overdue planned maintenance visit", "maintenance"),
}

#: Metric -> the decision a reading far off its aim calls for (said once per topic, so a
#: probable cause on the same topic takes its place).
METRIC_ACTIONS: dict[str, Decision] = {
    "box_temp": Decision(
        "Have staff check the stock in this box is still safe to use", "stock", first=True
    ),
    "run_capacitor": Decision(
        "Approve replacing the run capacitor: it measured outside its rating", "start"
    ),
    "start_capacitor": Decision(
        "Approve replacing the start capacitor: it measured outside its rating", "start"
    ),
    "supply_voltage": Decision(_ELECTRICIAN, "supply"),
    "voltage_unbalance": Decision(_ELECTRICIAN, "supply"),
    "head_pressure": Decision(
        "Book a condenser clean and fan check soon: the head pressure is near its cut-out",
        "condenser",
        pressing=3,
    ),
    "standstill_amps": Decision(_START_NOW, "start", pressing=3),
}


def follow_up(subject: str) -> Decision:
    """The decision for anything the tables above do not name."""
    return Decision(f"Book a follow-up visit to look into the {subject}", subject)


def one_per_topic(asked: Iterable[tuple[Decision, str]]) -> list[str]:
    """The texts to ask, one per topic: each topic keeps its first place in ``asked`` (most
    urgent first) and its most pressing words; stock at risk goes before all."""
    chosen: dict[str, tuple[int, Decision, str]] = {}
    for place, (decision, text) in enumerate(asked):
        held = chosen.get(decision.topic)
        if held is None:
            chosen[decision.topic] = (place, decision, text)
        elif decision.pressing > held[1].pressing:
            chosen[decision.topic] = (held[0], decision, text)
    ordered = sorted(chosen.values(), key=lambda c: (not c[1].first, c[0]))
    return [text for _, _, text in ordered]


# --- the customer's copy: provenance belongs in the methods appendix ------------------------

#: Marks of where a value comes from; a bracketed aside carrying one is provenance.
PROVENANCE_MARKS = re.compile(r"\b(from memory|common practice|rimewatch choice|ours)\b", re.I)


def _top_level_asides(text: str) -> list[tuple[int, int]]:
    """(start, end) of each outermost bracketed aside, brackets included."""
    spans, depth, start = [], 0, 0
    for i, ch in enumerate(text):
        if ch == "(":
            if depth == 0:
                start = i
            depth += 1
        elif ch == ")" and depth:
            depth -= 1
            if depth == 0:
                spans.append((start, i + 1))
    return spans


def split_provenance(text: str) -> tuple[str, tuple[str, ...]]:
    """``text`` without the bracketed asides that say where a value came from, and those
    asides (without brackets) for the methods appendix."""
    kept, moved, at = [], [], 0
    for start, end in _top_level_asides(text):
        aside = text[start + 1 : end - 1]
        if PROVENANCE_MARKS.search(aside):
            kept.append(text[at:start].rstrip())
            moved.append(aside.strip())
            at = end
    kept.append(text[at:])
    return "".join(kept).strip(), tuple(moved)
