"""Probable causes drawn from the metrics: the classic troubleshooting patterns as data.

The patterns are the table in docs/references.md §6 (TXV systems; common practice with the
textbook and trade-press sources cited there). Each is written as a ``Rule`` over named
*signals*: a signal is a yes/no observation about one reading ("superheat above its range",
"bubbles in the sight glass"). A signal that cannot be judged (its metric was not scored, the
flag was not given) is simply not true, so missing data never triggers a finding nor vetoes
one: it only lowers the confidence.

A rule fires when all signals of any one of its ``triggers`` hold and none of its
``excluding`` signals holds: the excluding signals are the symptoms that tell a neighbouring
cause apart, so a rule needs evidence against its neighbours, not one metric off its band.
Where the readings cannot tell two causes apart (a dirty condenser and non-condensables run
alike), the finding names the other as an alternative and the check that would decide.
Its confidence starts at ``base_confidence`` and rises with each ``supporting`` signal that
holds, up to ``MAX_CONFIDENCE``.

This module holds the signals by name and the rules; ``signals`` reads the signals off a
batch's graded metrics and ``rule_firing`` runs the rules over them.
"""

from __future__ import annotations

from dataclasses import dataclass

MAX_CONFIDENCE = 0.95


@dataclass(frozen=True)
class Signal:
    """A yes/no observation; ``text`` is the evidence line template (filled per row)."""

    name: str
    text: str


#: Every signal a rule may name, with the evidence it stands for. ``{metric}`` placeholders
#: are filled from the metric of that name (``measured``, ``low``, ``high``, ``unit``).
SIGNALS: dict[str, Signal] = {
    s.name: s
    for s in (
        Signal("td_high", "evaporator TD {evaporator_td} above its ok band {evaporator_td:band}"),
        Signal(
            "td_very_high",
            "evaporator TD {evaporator_td} far above its ok band {evaporator_td:band}",
        ),
        Signal("td_low", "evaporator TD {evaporator_td} below its ok band {evaporator_td:band}"),
        Signal("td_not_high", "evaporator TD {evaporator_td} not above its ok band"),
        Signal(
            "split_high",
            "condenser split {condenser_split} above its ok band {condenser_split:band}",
        ),
        Signal(
            "split_very_high",
            "condenser split {condenser_split} far above its ok band {condenser_split:band}",
        ),
        Signal(
            "split_low",
            "condenser split {condenser_split} below its ok band {condenser_split:band}",
        ),
        Signal("sh_high", "superheat {superheat} above its range {superheat:band}"),
        Signal("sh_low", "superheat {superheat} below its range {superheat:band}"),
        Signal("sh_very_low", "superheat {superheat} is nearly zero"),
        Signal("sh_not_high", "superheat {superheat} not above its range"),
        Signal("sh_ok", "superheat {superheat} inside its range {superheat:band}"),
        Signal("sc_high", "subcooling {subcooling} above its range {subcooling:band}"),
        Signal("sc_low", "subcooling {subcooling} below its range {subcooling:band}"),
        Signal("sc_not_high", "subcooling {subcooling} not above its range"),
        Signal("sc_not_low", "subcooling {subcooling} not below its range"),
        Signal("amps_high", "running amps {running_amps} above RLA {running_amps:target}"),
        Signal("amps_low", "running amps {running_amps} well below RLA {running_amps:target}"),
        Signal(
            "cr_low",
            "compression ratio {compression_ratio} below what this application usually runs",
        ),
        Signal(
            "discharge_high",
            "discharge line {discharge_line_temp} above its limit {discharge_line_temp:target}",
        ),
        Signal(
            "locked_rotor",
            "compressor not running but drawing {standstill_amps} (LRA "
            "{standstill_amps:target})",
        ),
        Signal("volts_low", "supply voltage {supply_voltage} below {supply_voltage:band}"),
        Signal("volts_high", "supply voltage {supply_voltage} above {supply_voltage:band}"),
        Signal(
            "voltage_unbalanced",
            "voltage unbalance {voltage_unbalance} above {voltage_unbalance:high}",
        ),
        Signal(
            "current_unbalanced",
            "current unbalance {current_unbalance} above {current_unbalance:high}",
        ),
        Signal("run_cap_bad", "run capacitor {run_capacitor} outside {run_capacitor:band}"),
        Signal("start_cap_bad", "start capacitor {start_capacitor} outside {start_capacitor:band}"),
        Signal("box_warm", "box temperature {box_temp} above its ok band {box_temp:band}"),
        Signal(
            "warm_but_fed",
            "box temperature {box_temp} above its ok band while the evaporator TD "
            "{evaporator_td} is not above its own",
        ),
        Signal(
            "called_not_running",
            "compressor not running although the control is calling for cooling",
        ),
        Signal("coil_iced", "evaporator coil reported iced"),
        Signal("evap_fans_off", "evaporator fans reported not running"),
        Signal("cond_fan_off", "condenser fan reported not running"),
        Signal("bubbles", "bubbles in the sight glass"),
        Signal("sight_glass_clear", "sight glass clear"),
    )
}


@dataclass(frozen=True)
class Alternative:
    """A neighbouring cause the readings cannot rule out, unless one of ``unless`` holds,
    and the check on site that tells the two apart."""

    code: str
    check: str
    unless: tuple[str, ...] = ()


@dataclass(frozen=True)
class Rule:
    """One troubleshooting pattern turned into a rule over signals.

    A rule fires on the symptoms that tell it apart from its neighbours, not on one metric:
    its ``excluding`` signals are the neighbours' distinguishing symptoms. Where the readings
    cannot separate two causes the rule names the other as an ``alternative`` with the check
    that would settle it. A rule with no triggers is a cause that no reading set can tell
    apart on its own: it is only ever named as an alternative.
    """

    code: str
    title: str
    triggers: tuple[frozenset[str], ...]
    supporting: tuple[str, ...]
    excluding: tuple[str, ...]
    base_confidence: float
    advice: str
    #: The likely repair opens the refrigerant circuit (certified handling applies).
    opens_circuit: bool
    alternatives: tuple[Alternative, ...] = ()
    source: str = "docs/references.md §6.2 troubleshooting table (common practice)"


def _t(*names: str) -> frozenset[str]:
    return frozenset(names)


_DRIER_CHECK = (
    "Measure the temperature across the filter-drier, the solenoid and any hand valve in the "
    "liquid line: a drop of more than a few degrees marks a restriction; none points to the "
    "charge."
)
_STANDING_CHECK = (
    "With the condenser clean and its fans running, stop the unit and let the pressures "
    "settle: a standing head pressure above the saturation pressure at the surrounding "
    "temperature points to non-condensables."
)

#: The rules, in bit order of the batch masks.
RULES: tuple[Rule, ...] = (
    Rule(
        code="undercharge",
        title="Refrigerant charge looks low",
        # Receiverless, the subcooling falls first (a TXV holds its superheat until the liquid
        # seal thins: charging by subcooling, common practice; NISTIR 7350 finds subcooling
        # the most sensitive feature with a TXV); with a receiver, flash gas in the glass.
        triggers=(_t("sc_low"), _t("sh_high", "bubbles")),
        supporting=("td_high", "split_low", "amps_low", "bubbles", "sc_low", "box_warm"),
        # a starved evaporator boils low: an evaporating temperature above target is the
        # compressor not pulling down, not a short charge
        excluding=(
            "sc_high",
            "coil_iced",
            "evap_fans_off",
            "split_high",
            "td_low",
            "warm_but_fed",
        ),
        base_confidence=0.5,
        advice="Look for the leak before adding anything: check joints, valve cores and "
        "coils with a detector, repair, then weigh in refrigerant and record the amount "
        "added for the leak-rate log.",
        opens_circuit=True,
        # On a receiverless unit the low subcooling tells a short charge from a restriction
        # (which backs liquid up and raises it); with a receiver only the drier check does.
        alternatives=(Alternative("liquid_line_restriction", _DRIER_CHECK, unless=("sc_low",)),),
    ),
    Rule(
        code="overcharge",
        title="Refrigerant charge looks high",
        # Liquid backs up into the condenser (high subcooling) while the evaporator is fed
        # (superheat not high: a restriction starves it); the head rises with it.
        triggers=(_t("sc_high"),),
        supporting=("amps_high", "sh_ok", "discharge_high", "sh_low", "split_high"),
        excluding=("sh_high", "cond_fan_off", "bubbles"),
        base_confidence=0.5,
        advice="Make sure the condenser is clean and its fans run first; if the head and "
        "subcooling stay high, recover refrigerant until the subcooling is back in range "
        "and record the amount recovered.",
        opens_circuit=True,
        alternatives=(Alternative("non_condensables", _STANDING_CHECK),),
    ),
    Rule(
        code="liquid_line_restriction",
        title="Something is restricting the liquid line",
        triggers=(_t("sh_high", "sc_high"),),
        supporting=("td_high", "split_low", "amps_low", "bubbles", "box_warm"),
        excluding=("split_high", "td_low", "warm_but_fed"),
        base_confidence=0.45,
        advice="Feel or measure the temperature across the filter-drier, solenoid and any "
        "hand valves in the liquid line: a drop of more than a few degrees marks the "
        "restriction. Replace a plugged drier after recovering the charge.",
        opens_circuit=True,
    ),
    Rule(
        code="metering_overfeeding",
        title="Metering device is overfeeding the evaporator",
        triggers=(_t("sh_low"),),
        supporting=("sh_very_low", "amps_high", "td_not_high"),
        excluding=("td_high", "coil_iced", "evap_fans_off", "sc_high", "split_high"),
        base_confidence=0.5,
        advice="Check the expansion valve's bulb is tight, insulated and on the suction "
        "line, and that the superheat setting has not been turned in; liquid reaching "
        "the compressor will damage it.",
        opens_circuit=False,
    ),
    Rule(
        code="metering_underfeeding",
        title="Metering device is starving the evaporator",
        triggers=(_t("sh_high", "sc_not_low"), _t("sh_high", "sight_glass_clear")),
        supporting=("td_high", "split_low", "amps_low", "sight_glass_clear", "box_warm"),
        excluding=(
            "bubbles",
            "sc_low",
            "sc_high",
            "coil_iced",
            "evap_fans_off",
            "td_low",
            "warm_but_fed",
        ),
        base_confidence=0.4,
        advice="With a full liquid line, check the valve's inlet screen, its bulb charge "
        "(a lost charge closes the valve) and the superheat setting; on a capillary "
        "system look for a kinked or blocked tube.",
        opens_circuit=True,
        # A restriction past the sight glass starves the valve the same way; on a
        # receiverless unit its high subcooling gives it away (and excludes this rule).
        # A restriction starves the valve the same way; its subcooling runs high, but within
        # the healthy band the two overlap (docs/references.md §6: N/up against up).
        alternatives=(Alternative("liquid_line_restriction", _DRIER_CHECK),),
    ),
    Rule(
        code="low_evaporator_airflow",
        title="Too little air through the evaporator (fans, dirt or ice)",
        triggers=(_t("td_high", "sh_not_high"), _t("coil_iced"), _t("evap_fans_off")),
        supporting=(
            "td_very_high",
            "split_low",
            "coil_iced",
            "evap_fans_off",
            "sh_low",
            "box_warm",
        ),
        excluding=(),
        base_confidence=0.5,
        advice="Check the evaporator fans and blades, the coil for dirt or ice, and the "
        "defrost heaters, timer or controller; clear ice fully before judging the charge.",
        opens_circuit=False,
    ),
    Rule(
        code="condenser_heat_rejection",
        title="Condenser is not getting rid of its heat (dirty coil or fan)",
        triggers=(_t("split_high"), _t("cond_fan_off")),
        supporting=(
            "split_very_high",
            "amps_high",
            "discharge_high",
            "cond_fan_off",
            "sc_not_high",
        ),
        # A receiverless unit with high subcooling is holding too much liquid: overcharge.
        excluding=("sc_high",),
        base_confidence=0.45,
        advice="Clean the condenser coil, check every condenser fan runs and turns the "
        "right way, and that discharge air is not being drawn back into the inlet.",
        opens_circuit=False,
        alternatives=(Alternative("non_condensables", _STANDING_CHECK, unless=("cond_fan_off",)),),
    ),
    Rule(
        code="non_condensables",
        title="Air or other non-condensables may be in the system",
        triggers=(),
        supporting=(),
        excluding=(),
        base_confidence=0.25,
        advice="Once the condenser is clean and its fans run, confirm with the unit off: a "
        "standing pressure above the saturation pressure at the ambient temperature "
        "points to non-condensables. Recover, evacuate and recharge by weight.",
        opens_circuit=True,
        source="docs/references.md §6.2 troubleshooting table (common practice): its running "
        "symptoms are a dirty condenser's, so it is named beside that finding, never alone",
    ),
    Rule(
        code="weak_compressor",
        title="Compressor is not pumping well (worn valves or rings)",
        # Evaporating above and condensing below what the box and the air call for at once:
        # the compressor is not moving the refrigerant (NISTIR 7350 valve leakage;
        # docs/references.md §6). A warm box over an evaporator that is not starved says the same:
        # capacity is short on the compressor's side.
        triggers=(
            _t("td_low", "split_low"),
            _t("td_low", "sh_high"),
            _t("td_low", "box_warm"),
            _t("warm_but_fed", "sh_high"),
            _t("warm_but_fed", "sc_low"),
            _t("warm_but_fed", "split_low"),
        ),
        supporting=("amps_low", "cr_low", "sh_high", "sc_low", "box_warm", "td_low", "split_low"),
        # flash gas in the glass is the charge's or the liquid line's sign, never the pump's
        excluding=(
            "amps_high",
            "coil_iced",
            "evap_fans_off",
            "cond_fan_off",
            "td_high",
            "bubbles",
        ),
        base_confidence=0.4,
        advice="Confirm before condemning it: suction and discharge pressures should move "
        "apart quickly when the compressor starts and hold when it stops; a pump-down "
        "test or the manufacturer's performance data settles it.",
        opens_circuit=True,
    ),
    Rule(
        code="compressor_not_starting",
        title="Compressor does not start when called (start components suspect)",
        triggers=(_t("locked_rotor"), _t("called_not_running")),
        supporting=(
            "locked_rotor",
            "run_cap_bad",
            "start_cap_bad",
            "volts_low",
            "voltage_unbalanced",
        ),
        excluding=(),
        base_confidence=0.6,
        advice="With the power locked out, discharge and test the run and start capacitors "
        "and the start relay; check the voltage at the compressor terminals while it "
        "tries to start, and the overload and contactor. If all are good the compressor "
        "may be mechanically locked.",
        opens_circuit=False,
    ),
    Rule(
        code="capacitor_out_of_rating",
        title="A capacitor reads outside its rating",
        triggers=(_t("run_cap_bad"), _t("start_cap_bad")),
        supporting=("run_cap_bad", "start_cap_bad", "amps_high", "current_unbalanced"),
        excluding=("locked_rotor", "called_not_running"),
        base_confidence=0.7,
        advice="With the power locked out and the capacitor discharged, confirm the reading "
        "with the capacitor out of circuit and replace it with one of the rating on the "
        "nameplate; a weak run capacitor raises the running amps and heats the windings.",
        opens_circuit=False,
        source="IEC 60252-1 / EIA-456-A marked tolerance (run), IEC 60252-2 marked range (start)",
    ),
    Rule(
        code="supply_problem",
        title="Supply voltage out of tolerance or unbalanced",
        triggers=(_t("volts_low"), _t("volts_high"), _t("voltage_unbalanced")),
        supporting=("current_unbalanced", "locked_rotor", "amps_high"),
        excluding=(),
        base_confidence=0.6,
        advice="Measure at the disconnect and at the contactor under load to find where "
        "the voltage is lost; loose or burnt connections and undersized wiring are "
        "common. Supply problems upstream of the unit are for the electrician or the "
        "utility.",
        opens_circuit=False,
    ),
)

RULE_CODES: tuple[str, ...] = tuple(r.code for r in RULES)
RULES_BY_CODE: dict[str, Rule] = {r.code: r for r in RULES}


def _check_rules() -> None:
    for rule in RULES:
        unless = (s for a in rule.alternatives for s in a.unless)
        names = (*(s for t in rule.triggers for s in t), *rule.supporting, *rule.excluding, *unless)
        for name in names:
            if name not in SIGNALS:
                raise ValueError(f"rule {rule.code} names unknown signal {name}")
        for alternative in rule.alternatives:
            if alternative.code not in RULES_BY_CODE:
                raise ValueError(f"rule {rule.code} names unknown alternative {alternative.code}")
        if unchecked := [a.code for a in rule.alternatives if not a.check]:
            raise ValueError(f"rule {rule.code} names {unchecked} without a deciding check")
    if len(RULES) > 32:
        raise ValueError("finding masks are 32 bits wide")


_check_rules()
