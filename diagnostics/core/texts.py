"""The words of a diagnosis, written when a stored one is read: why a metric was not scored,
where each target came from, the evidence behind a finding, and the safety cautions.

Each text depends on a few codes only (a reason, what was missing, where a target came
from, which signals held), so each is written once per distinct case and cached, whatever
the number of rows read. Numbers in evidence are SI with US customary beside them (the
trade in North America reads F and psig); gauge stays gauge.
"""

from __future__ import annotations

import functools
import string
from collections.abc import Callable, Mapping
from typing import NamedTuple

from diagnostics.core import findings, refrigerants, rule_firing, units
from diagnostics.core import scoring as sc
from diagnostics.core import targets as tg
from diagnostics.core.design import Origin
from diagnostics.core.reasons import (
    ATMOSPHERE_BAD,
    FIELD_MISSING,
    FIELD_PARTIAL,
    METRIC_NEEDS,
    REASON_COMPRESSOR_OFF,
    REASON_DEFROST,
    REASON_HEAD_CONTROL,
    REASON_ICE_MACHINE,
    REASON_RUNNING_UNKNOWN,
    REASON_SINGLE_PHASE,
    REASON_TRANSCRITICAL,
    REASON_WATER_COOLED,
    TARGET_MISSING,
)
from diagnostics.core.types import Application, HeadPressureControl, MeteringDevice

REASON_TEXT: dict[int, str] = {
    REASON_WATER_COOLED: "water-cooled condenser: there is no air split to score",
    REASON_TRANSCRITICAL: "R-744 above its critical pressure: no condensing temperature or "
    "subcooling exists; the gas-cooler approach and head pressure are scored instead",
    REASON_HEAD_CONTROL: "the head-pressure control was holding condensing up at this "
    "entering-air temperature, so the split says nothing about the condenser; judge the coil "
    "by eye or on a warmer day",
    REASON_RUNNING_UNKNOWN: "whether the compressor was running was not given",
    REASON_SINGLE_PHASE: "single-phase supply: there is no three-phase unbalance",
    REASON_COMPRESSOR_OFF: "compressor reported not running: cycle readings are not judged",
    REASON_DEFROST: "the unit was defrosting: the box and the refrigeration cycle are not "
    "judged until it is back on cooling",
    REASON_ICE_MACHINE: "an ice machine is judged on its refrigeration cycle and electrics, "
    "not on the temperature of its bin",
}


@functools.cache
def missing_text(name: str, key: int) -> str:
    """Why metric ``name`` was not scored for want of inputs (``reasons.missing_keys``)."""
    fields, design = METRIC_NEEDS[name]
    missing: list[str] = []
    for k, f in enumerate(fields):
        state = key >> 2 * k & 3
        if state == FIELD_MISSING:
            missing.append(f)
        elif state == FIELD_PARTIAL:
            missing.append(f"{f} (three legs)")
    parts = []
    if missing:
        parts.append("not measured: " + ", ".join(missing))
    if key & TARGET_MISSING:
        parts.append(f"the unit's data does not give {design}")
    if not parts and "kpa" in " ".join(fields) and key & ATMOSPHERE_BAD:
        parts.append("the site elevation is unusable, so gauge pressures cannot be made absolute")
    if not parts:
        return "the pressure is outside the refrigerant's saturation range"
    return "; ".join(parts)


def reason_text(name: str, reason: int, missing: int) -> str:
    """Why metric ``name`` was not scored: its reason, else what it lacked."""
    return REASON_TEXT.get(reason) or missing_text(name, missing)


# --- where the targets came from -----------------------------------------------------------


class SourceContext(NamedTuple):
    """What decides the texts saying where a row's targets came from: the unit's design
    answers, what it left to its application's defaults, and the origin of each target."""

    application: Application
    metering: MeteringDevice
    metering_given: bool
    receiver: bool | None
    receiver_given: bool
    box: Origin
    evap_td: Origin
    split: Origin
    superheat: Origin
    run_cap_tolerance: Origin
    control: HeadPressureControl
    control_given: bool
    setpoint: Origin
    basis_mid: bool


def _design_source(origin: Origin, default_source: str) -> str:
    if origin == "design":
        return tg.DESIGN
    if origin == "application_default":
        return f"application default ({default_source})"
    return "missing"


@functools.cache
def target_sources(c: SourceContext) -> dict[str, str]:
    """Where each metric's target value came from, for one case."""
    defaults = tg.APPLICATION_DEFAULTS[c.application]
    receiver_note = tg.DESIGN if c.receiver_given else defaults.receiver_source
    sub_source = "missing" if c.receiver is None else tg.SUBCOOLING_DEFAULTS[c.receiver].source
    sh_device = f"metering device {c.metering}" + (
        "" if c.metering_given else f" (default for {c.application})"
    )
    control_note = f"head-pressure control: {c.control.replace('_', ' ')}" + (
        "" if c.control_given else f" ({defaults.head_pressure_control_source})"
    )
    if c.control != "none":
        control_note += ", set point " + (
            tg.DESIGN
            if c.setpoint == "design"
            else f"default ({tg.HEAD_PRESSURE_CONTROL_DEFAULTS[c.control].source})"
        )
    basis = "mid-point" if c.basis_mid else "dew point"
    return {
        "box_temp": _design_source(
            c.box, defaults.box_temp_c.source if defaults.box_temp_c else ""
        ),
        "evaporator_td": _design_source(
            c.evap_td, defaults.evap_td_k.source if defaults.evap_td_k else ""
        )
        + f"; on the {basis}",
        "condenser_split": _design_source(c.split, defaults.condenser_split_k.source)
        + f"; on the {basis}; {control_note}",
        "superheat": _design_source(
            c.superheat,
            f"{tg.SUPERHEAT_DEFAULTS[(c.application, c.metering)].source}; {sh_device}",
        ),
        "subcooling": f"{sub_source}; receiver: {receiver_note}",
        "discharge_line_temp": tg.DISCHARGE_LINE_MAX_C.source,
        "compression_ratio": f"{tg.COMPRESSION_RATIO_LIMIT.source}, or the application's "
        f"typical top where higher ({defaults.compression_ratio.source})",
        "head_pressure": f"{tg.DESIGN}: high-pressure cut-out",
        "gas_cooler_approach": tg.GAS_COOLER_APPROACH_K.source,
        "running_amps": f"{tg.NAMEPLATE}: RLA",
        "standstill_amps": f"{tg.NAMEPLATE}: LRA",
        "supply_voltage": f"{tg.NAMEPLATE} voltage",
        "voltage_unbalance": "NEMA MG-1 14.36",
        "current_unbalance": "common practice",
        "run_capacitor": f"{tg.NAMEPLATE} rating, tolerance: "
        + _design_source(c.run_cap_tolerance, tg.RUN_CAPACITOR_TOLERANCE_PCT.source),
        "start_capacitor": f"{tg.NAMEPLATE} range",
    }


@functools.cache
def metric_target_source(name: str, c: SourceContext) -> str:
    """A metric target's source with its ok band's, once where they are the same."""
    source = target_sources(c)[name]
    rule = sc.SCORING_TABLE[name]
    return rule.source if source in rule.source else f"target: {source}; ok band: {rule.source}"


# --- evidence ------------------------------------------------------------------------------

_Convert = Callable[[float], float]
_SECOND_UNIT: dict[str, tuple[str, _Convert]] = {
    "C": ("F", lambda v: float(units.temperature_from_c(v, "F"))),
    "K": ("F", lambda v: float(units.temperature_difference_from_k(v, "F"))),
    "kPa": ("psig", lambda v: float(units.pressure_from_kpa_gauge(v, "psig"))),
}


def _number(value: float) -> str:
    return f"{value:.1f}"


def _fmt(value: float | None, unit: str) -> str:
    if value is None:
        return "?"
    text = f"{_number(value)} {unit}".strip() if unit else _number(value)
    if unit in _SECOND_UNIT:
        other, convert = _SECOND_UNIT[unit]
        text += f" ({_number(convert(value))} {other})"
    return text


def _band(low: float | None, high: float | None, symbol: str) -> str:
    lo_text = "" if low is None else _number(low)
    hi_text = "" if high is None else _number(high)
    if lo_text and hi_text:
        return f"{lo_text} to {hi_text} {symbol}".strip()
    return f"{'at most ' + hi_text if hi_text else 'at least ' + lo_text} {symbol}".strip()


def _band_text(low: float | None, high: float | None, unit: str) -> str:
    text = _band(low, high, unit)
    if unit in _SECOND_UNIT:
        other, convert = _SECOND_UNIT[unit]
        text += (
            " ("
            + _band(
                None if low is None else convert(low),
                None if high is None else convert(high),
                other,
            )
            + ")"
        )
    return text


@functools.cache
def _template(text: str) -> tuple[tuple[str, str | None, str], ...]:
    """An evidence template split once into (literal, metric or None, spec) parts: ``{m}``
    is the measured value, ``{m:band}`` the ok band, ``{m:target}`` and ``{m:high}``."""
    return tuple((lit, name, spec or "") for lit, name, spec, _ in string.Formatter().parse(text))


#: A metric's numbers over the rows read, by field (``measured``, ``target``, ``low``,
#: ``high``), None where missing.
MetricValues = Mapping[str, Mapping[str, list[float | None]]]


def evidence_texts(signal: str, at: list[int], values: MetricValues) -> list[str]:
    """The evidence line of ``signal`` for the rows ``at``, filled part by part."""
    pieces: list[list[str]] = []
    for literal, metric, spec in _template(findings.SIGNALS[signal].text):
        if literal:
            pieces.append([literal] * len(at))
        if metric is None:
            continue
        v, unit = values[metric], sc.SCORING_TABLE[metric].unit
        if spec == "band":
            low, high = v["low"], v["high"]
            pieces.append([_band_text(low[j], high[j], unit) for j in at])
        else:
            shown = (
                v["target"] if spec == "target" else v["high"] if spec == "high" else v["measured"]
            )
            pieces.append([_fmt(shown[j], unit) for j in at])
    return ["".join(parts) for parts in zip(*pieces, strict=True)]


@functools.cache
def evidence_names(bit: int, first_trigger: int, support: int) -> tuple[str, ...]:
    """The signals behind rule ``bit`` for rows whose first holding trigger and supporting
    signals (bit j = ``rule.supporting[j]``) are these; ``rule_firing.signals_behind`` decides."""
    rule = findings.RULES[bit]
    holding = dict.fromkeys(rule.triggers[first_trigger], True)
    for j, name in enumerate(rule.supporting):
        if support >> j & 1:
            holding[name] = True
    return rule_firing.signals_behind(rule, holding)


# --- cautions ------------------------------------------------------------------------------

#: Safety cautions (our wording). Which apply is decided per refrigerant in ``caution_codes``.
CAUTIONS: dict[str, str] = {
    "electrical": "Electrical hazard: lock out and tag out the supply before touching wiring or "
    "terminals, discharge capacitors before handling them, and take live readings only with "
    "rated meters and protective equipment.",
    "pressure": "Refrigerant under pressure: wear eye protection and gloves; liquid "
    "refrigerant causes frostbite, and a closed vessel must never be heated.",
    "high_pressure_co2": "R-744 (CO2) runs at several times the pressure of other "
    "refrigerants and rises further when the system stands warm: use gauges, hoses and "
    "tools rated for it.",
    "flammable_2l": "Mildly flammable refrigerant (class 2L): keep ignition sources away, "
    "ventilate the work area, and use recovery equipment and leak detectors rated for it.",
    "flammable": "Flammable refrigerant: no ignition sources, ventilate, check the area "
    "with a detector for flammable gas, and use equipment rated for the refrigerant.",
    "toxic": "Toxic refrigerant (safety class B): work with ventilation and the protective "
    "equipment and detection the site's procedures require.",
    "certified_handling": "Opening the refrigerant circuit, recovery and charging are for "
    "certified technicians: recover, never vent, and record every amount added or removed.",
    "codes": "Follow local codes, the manufacturer's instructions and licensed practice; this "
    "diagnosis supports the technician's judgement and does not replace it.",
}

#: Finding bits whose likely repair opens the circuit (certified handling applies).
OPENS_CIRCUIT_MASK = sum(1 << bit for bit, rule in enumerate(findings.RULES) if rule.opens_circuit)


@functools.cache
def caution_codes(designation: str, opens_circuit: bool) -> tuple[str, ...]:
    """The cautions that apply to work on a refrigerant, the certified handling ones where
    the likely repair opens the circuit."""
    ref = refrigerants.get(designation)
    codes = ["electrical", "pressure"]
    if ref.designation == "R-744":
        codes.append("high_pressure_co2")
    safety = ref.safety_class.upper()
    if safety.endswith("2L"):
        codes.append("flammable_2l")
    elif safety.endswith(("2", "3")):
        codes.append("flammable")
    if safety.startswith("B"):
        codes.append("toxic")
    if opens_circuit:
        codes.append("certified_handling")
    codes.append("codes")
    return tuple(codes)
