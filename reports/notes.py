"""The report's last pages: where the numbers come from, and the safety cautions.

The wording is ours. Sources are named as the diagnostics core names them; the glide choice,
the leak-rate rule set and the algorithm version are quoted from the stored results, so an
old report keeps describing what was computed then.
"""

from __future__ import annotations

from dataclasses import dataclass
from importlib import metadata

from django.conf import settings

from diagnostics.core import costs, leaks
from diagnostics.core.sources import describe_rules

from .data import HEALTH_LABELS, SiteMonth
from .summary import DEFAULT_RULES
from .words import SCORE_NAME


@dataclass(frozen=True)
class Note:
    topic: str
    text: str
    sources: tuple[str, ...] = ()


def property_library() -> str:
    """The refrigerant property library and its installed version."""
    try:
        return f"CoolProp {metadata.version('CoolProp')}"
    except metadata.PackageNotFoundError:  # pragma: no cover - CoolProp is a dependency
        return "CoolProp"


def configured_leak_rules() -> str:
    """The leak-rate rule set and method in force (settings), named as the core names it."""
    rules = leaks.RULE_SETS.get(settings.RIMEWATCH_LEAK_RULE_SET)
    name = rules.name if rules else settings.RIMEWATCH_LEAK_RULE_SET
    return f"{name} ({settings.RIMEWATCH_LEAK_RATE_METHOD.replace('_', ' ')} method)"


def method_notes(sm: SiteMonth) -> tuple[Note, ...]:
    glide = (
        " ".join(f"“{g}”" for g in sm.glide_choices)
        if sm.glide_choices
        else "No reading was diagnosed this month, so no glide choice is quoted."
    )
    versions = sm.algorithm_version or "none this month"
    if sm.leak_rules:
        leak_rules = (
            "; ".join(
                f"{rule} ({method.replace('_', ' ')} method)" for rule, method in sm.leak_rules
            )
            + " (as stored with the rates)."
        )
    else:
        leak_rules = (
            f"{configured_leak_rules()} (configured; no leak rate was stored at this site in "
            "these twelve months)."
        )
    cost_sources = tuple(
        f"{name.replace('_', ' ')}: {source}"
        for name, _value, source in describe_rules(costs.DEFAULT_COST_RULES)
    )
    return (
        Note(
            "Refrigerant properties",
            f"Saturation temperatures are computed from the measured pressures with "
            f"{property_library()}, which implements the published reference equations of "
            "state; blends are modelled from their ASHRAE 34 composition. Gauge readings are "
            "made absolute with the standard atmosphere at the site's elevation "
            f"({sm.site.elevation_m:.0f} m).",
            (
                "ASHRAE Handbook - Fundamentals (2017), ch. 1, eq. 3; U.S. Standard Atmosphere "
                "1976",
                "ANSI/ASHRAE Standard 34 (compositions and safety classes)",
            ),
        ),
        Note("Blends with glide (quoted from the stored diagnoses)", glide),
        Note(
            "Targets and scores",
            "Evaporating target = box temperature - evaporator TD; condensing target = air "
            "entering the condenser + condenser split; the TD and split come from the unit's "
            "design data, else from the application's default. Superheat and subcooling are "
            "judged against ranges by metering device and receiver; current against the "
            "nameplate RLA and LRA; voltage against the nameplate tolerance; capacitors "
            "against their marked rating. Each visit's score starts at 100 and loses points "
            f"per metric out of range. Diagnosis algorithm version(s): {versions}.",
            (
                "Trott & Welch, Refrigeration and Air-Conditioning (evaporator TD, condenser "
                "split)",
                "NEMA MG-1 12.44 (voltage tolerance) and 14.36 (voltage unbalance)",
                "UL 984 (RLA = MCC / 1.56); capacitance uF = 2652 x A / V at 60 Hz",
                "EIA-456-A and IEC 60252 (capacitor tolerances); common practice for superheat "
                "and subcooling ranges",
            ),
        ),
        Note(
            "Leak rates",
            "Each refrigerant addition carries the leak rate stored when it was recorded, by "
            "the annualizing and rolling-average methods, compared with the threshold for the "
            f"appliance type. Rule set and method: {leak_rules} CO2e is the mass added times "
            "the refrigerant's GWP.",
            (
                "40 CFR 82.152 and 82.157; 40 CFR Part 84, Subpart C",
                "GWP: IPCC AR4 100-year, mass-weighted over the blend (40 CFR 84.64(b))",
            ),
        ),
        Note(
            "Energy money",
            "A condensing temperature above target costs compressor energy: the stored penalty "
            "(extra energy per unit of cooling, from a vapour-compression cycle at the actual "
            "and target conditions) is applied to the compressor's measured power over the "
            "month, at the site's tariff.",
            cost_sources,
        ),
        Note(
            "Words this report uses",
            f"A unit is “{HEALTH_LABELS['sound']}” when its {SCORE_NAME} is "
            f"{DEFAULT_RULES.healthy_score_min:.0f} or more, no reading is off its aim and no "
            f"flag is open; “{HEALTH_LABELS['watch']}” when a reading is off its aim, the "
            f"score is below {DEFAULT_RULES.healthy_score_min:.0f} or a flag of lower urgency "
            f"is open; “{HEALTH_LABELS['act']}” when a reading is far off its aim, the score "
            f"is below {DEFAULT_RULES.attention_score_below:.0f}, an urgent flag is open or a "
            f"leak rate passed its threshold. “{HEALTH_LABELS['unjudged']}”: too few readings "
            "were taken to score the check. The check score starts at 100 and loses points "
            "for each reading off its aim. A probable cause is described by how many separate "
            "signs in the readings agree on it (a single sign, some evidence, strong "
            "evidence), not as a probability. A trend reads “getting worse” while a flag that "
            "follows a change over several visits is open, whatever one month's score says.",
        ),
        Note(
            "How this report grades units",
            "Thresholds of this report (ours, not a published rule): "
            + "; ".join(
                f"{name.replace('_', ' ')} = {value} ({why})"
                for name, value, why in describe_rules(DEFAULT_RULES)
            )
            + ".",
        ),
        *provenance_notes(sm),
    )


def provenance_notes(sm: SiteMonth) -> tuple[Note, ...]:
    """Where the limits quoted by the flags come from, as the flags' records say (taken out
    of the flag texts in the body of the report)."""
    if not sm.provenance:
        return ()
    return (
        Note(
            "Where the flags' limits come from",
            "As recorded with the flags shown in this report; “from memory” marks a value "
            "recalled but not read in its source, “common practice” a rule of thumb of the "
            "trade, “ours” a choice of Rimewatch.",
            sm.provenance,
        ),
    )


@dataclass(frozen=True)
class Caution:
    title: str
    text: str


def safety_cautions(sm: SiteMonth) -> tuple[Caution, ...]:
    flammable = [u.unit for u in sm.units if u.unit.flammable]
    if flammable:
        listed = ", ".join(f"{u.tag} ({u.refrigerant}, class {u.safety_class})" for u in flammable)
        flammable_text = (
            f"Units on this site with a flammable refrigerant: {listed}. Class A2L burns "
            "slowly, class A3 (propane R-290, isobutane R-600a) readily: keep ignition sources "
            "away, ventilate, check the area with a detector for flammable gas, and use tools, "
            "recovery machines and leak detectors rated for the refrigerant."
        )
    else:
        flammable_text = (
            "No unit on this site holds a flammable (A2L or A3) refrigerant. Where one does, "
            "keep ignition sources away, ventilate, and use equipment rated for it."
        )
    return (
        Caution(
            "Electrical hazards",
            "Isolate, lock out and tag out the supply before touching wiring or terminals; "
            "discharge capacitors before handling them; take live readings only with rated "
            "meters and protective equipment.",
        ),
        Caution(
            "Refrigerant under pressure",
            "Systems hold refrigerant under pressure: wear eye protection and gloves; liquid "
            "refrigerant causes frostbite; never heat a closed vessel or cylinder.",
        ),
        Caution("Flammable refrigerants (A2L, A3)", flammable_text),
        Caution(
            "Certified handling",
            "Opening the refrigerant circuit, recovering and charging are for certified "
            "technicians (in the United States, under EPA Section 608): recover, never vent, "
            "and record every amount added or removed.",
        ),
        Caution(
            "Codes and licensed practice",
            "This report helps plan work; it does not replace a technician's judgement on "
            "site. Follow local codes, the manufacturer's instructions and licensed practice.",
        ),
    )
