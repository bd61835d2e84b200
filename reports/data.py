"""A site-month as plain data: what ``gather`` reads and what ``summary`` judges, as frozen
dataclasses that hold no ORM object, so the charts and the templates cannot trigger a
query. The queries are in ``queries`` and ``events``, their assembly in ``gather``, the
judgement in ``summary``; every one of them imports these types, none of them imports another
for them.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, datetime
from zoneinfo import ZoneInfo

from diagnostics.core import costs, leaks, site_leaks
from diagnostics.core.types import Caution

from . import words
from .months import Month
from .words import CONDITION_ORDER, CONDITIONS

# --- what is read -----------------------------------------------------------------------------


@dataclass(frozen=True)
class SiteInfo:
    id: int
    name: str
    customer: str
    address: str
    time_zone: str
    elevation_m: float
    design_ambient_c: float
    tariff_per_kwh: float
    currency: str


@dataclass(frozen=True)
class CapacitorRating:
    kind_label: str
    low_uf: float
    high_uf: float


@dataclass(frozen=True)
class UnitInfo:
    """Nameplate and design data, as stored (SI)."""

    id: int
    tag: str
    description: str
    application: str
    application_label: str
    appliance_type_label: str
    refrigerant: str
    safety_class: str
    gwp: float
    full_charge_kg: float
    metering_label: str
    condenser_label: str
    #: None where the unit's record does not say.
    has_receiver: bool | None
    design_box_temp_c: float
    design_evap_td_k: float | None
    design_condenser_split_k: float | None
    high_pressure_cutout_kpa_gauge: float | None
    nameplate_volts: float
    phase: int
    hertz: int
    rla_a: float
    lra_a: float
    installed_on: date | None
    run_capacitor: CapacitorRating | None
    start_capacitor: CapacitorRating | None

    @property
    def flammable(self) -> bool:
        """Safety classes 2L, 2 and 3 (ASHRAE 34) burn; class 1 does not."""
        return not self.safety_class.upper().endswith("1")

    @property
    def is_ice_machine(self) -> bool:
        """Judged on its refrigerant circuit and electrics, not on a box temperature."""
        return self.application == "ice_machine"


@dataclass(frozen=True)
class MetricRow:
    """A stored metric (the core's ``Metric``) with the label the report prints."""

    name: str
    label: str
    measured: float | None
    target: float | None
    low: float | None
    high: float | None
    deviation: float | None
    unit: str
    status: str
    points_lost: float
    reason: str

    @property
    def verdict(self) -> words.Verdict:
        return words.verdict(self.status, self.deviation)


@dataclass(frozen=True)
class FindingRow:
    """A stored finding as the report reads it; ``alternatives`` (codes the readings cannot
    tell apart from it) and ``deciding_check`` are empty where the stored form has none."""

    code: str
    title: str
    evidence: tuple[str, ...]
    confidence: float
    advice: str
    alternatives: tuple[str, ...] = ()
    deciding_check: str = ""

    @property
    def strength(self) -> str:
        return words.evidence_strength(len(self.evidence))

    @property
    def could_also_be(self) -> str:
        return words.could_also_be(self.alternatives, self.deciding_check)


@dataclass(frozen=True)
class Check:
    """One diagnosed reading set taken in the report month."""

    reading_set_id: int
    visit_reference: str
    taken_at: datetime
    stage: str
    stage_label: str
    score: float | None
    algorithm_version: str
    glide_choice: str
    energy_penalty_pct: float | None
    metrics: tuple[MetricRow, ...]
    findings: tuple[FindingRow, ...]
    cautions: tuple[Caution, ...]
    compressor_running: bool | None
    mean_amps: float | None
    mean_volts: float | None


@dataclass(frozen=True)
class HistoryPoint:
    """One visit's values for the trend charts (the as-found reading where there is one)."""

    taken_on: date
    score: float | None
    box_temp_c: float | None
    entering_air_c: float | None
    evaporating_c: float | None
    evaporating_target_c: float | None
    condensing_c: float | None
    condensing_target_c: float | None
    superheat_k: float | None
    superheat_low_k: float | None
    superheat_high_k: float | None
    subcooling_k: float | None
    subcooling_low_k: float | None
    subcooling_high_k: float | None
    amps_a: float | None
    compressor_running: bool | None
    run_capacitor_uf: float | None
    start_capacitor_uf: float | None


@dataclass(frozen=True)
class EvidenceRow:
    """A flag's evidence: ``text`` names its ``quantities`` (SI) as ``{name}``; the report
    writes them in its display units (``report_format.said``)."""

    text: str
    observed_on: date | None
    quantities: tuple[tuple[str, float, str], ...]


@dataclass(frozen=True)
class FlagRow:
    id: int
    kind: str
    kind_label: str
    severity: str
    severity_label: str
    severity_rank: int
    summary: str
    evidence: tuple[EvidenceRow, ...]
    projected_on: date | None
    opened_on: date
    #: The flag's numbers (SI), which ``summary`` may name as ``{name}``.
    forecast: tuple[tuple[str, float, str], ...]
    #: Acknowledged by the office by the time the flags were read (the note stays internal).
    acknowledged: bool


@dataclass(frozen=True)
class LeakRateRow:
    """A refrigerant addition and the leak rate stored for it (None where none is stored)."""

    event_id: int
    occurred_on: date
    amount_kg: float
    exemption: str
    visit_reference: str
    computed: bool
    rule_set: str
    method: str
    annualizing_percent: float | None
    rolling_average_percent: float | None
    threshold_percent: float | None
    over_threshold: bool
    in_scope: bool
    repair_due_on: date | None
    verification_due_on: date | None
    note: str

    @property
    def leak_rate_percent(self) -> float | None:
        """The rate by the facility's chosen method (the one compared with the threshold)."""
        return leaks.rate_by_method(
            self.method, self.annualizing_percent, self.rolling_average_percent
        )


@dataclass(frozen=True)
class ComponentRow:
    kind: str
    kind_label: str
    installed_on: date | None
    removed_on: date | None
    reason: str
    rating_uf_min: float | None
    rating_uf_max: float | None
    visit_reference: str


@dataclass(frozen=True)
class VisitInfo:
    id: int
    reference: str
    kind: str
    kind_label: str
    status: str
    status_label: str
    starts_at: datetime
    technicians: tuple[str, ...]
    unit_tags: tuple[str, ...]
    reported_problem: str
    work_summary: str


# --- what is judged ---------------------------------------------------------------------------


#: The condition words (``words.CONDITIONS``) by key, and their order of urgency.
HEALTH_LABELS: dict[str, str] = {key: c.label for key, c in CONDITIONS.items()}
HEALTH_ORDER: dict[str, int] = CONDITION_ORDER


@dataclass(frozen=True)
class Health:
    status: str
    reasons: tuple[str, ...]

    @property
    def label(self) -> str:
        return HEALTH_LABELS[self.status]

    @property
    def order(self) -> int:
        return HEALTH_ORDER[self.status]


TREND_LABELS: dict[str, str] = {
    "worse": "Getting worse",
    "better": "Improving",
    "steady": "Holding steady",
    "stuck": "No better",
    "unknown": "Too little history",
}


@dataclass(frozen=True)
class Trend:
    direction: str
    detail: str

    @property
    def label(self) -> str:
        return TREND_LABELS[self.direction]


@dataclass(frozen=True)
class Story:
    """What the report says of a unit's month in words: its trend and, where no probable
    cause is listed, the sentence in its place. Both come from one reading of the same
    data (``story_of``), so they cannot contradict each other or the flags."""

    trend: Trend
    cause: str


@dataclass(frozen=True)
class EnergyEstimate:
    """What the month's penalty costs; ``cost`` is None when it could not be estimated."""

    penalty_percent: float
    cost: costs.EnergyCost | None
    note: str

    @property
    def extra_cost_per_month(self) -> float | None:
        return self.cost.extra_cost_per_month if self.cost else None

    @property
    def extra_kwh_per_month(self) -> float | None:
        return self.cost.extra_kwh_per_month if self.cost else None


@dataclass(frozen=True)
class SiteOverview:
    unit_count: int
    checked_count: int
    counts: tuple[tuple[str, str, int], ...]
    mean_score: float | None
    lowest_score: float | None
    open_flag_count: int
    not_checked: tuple[str, ...]
    visits_by_kind: tuple[tuple[str, int], ...]
    energy_cost_per_month: float
    energy_kwh_per_month: float
    energy_units_estimated: int
    energy_units_not_estimated: tuple[str, ...]
    #: The costliest units: (tag, penalty %, kWh a month, cost a month), most first.
    energy_top: tuple[tuple[str, float, float, float], ...] = ()
    #: Units priced but not listed in ``energy_top``, and what they add up to.
    energy_rest_count: int = 0
    energy_rest_cost: float = 0.0

    @property
    def status(self) -> str:
        """The site's grade: its worst unit's, ignoring units not checked or not judged
        (unless no unit was judged)."""
        counted = [s for s, _, n in self.counts if n]
        present = [s for s in counted if s not in ("unseen", "unjudged")]
        if not present:
            return "unjudged" if "unjudged" in counted else "unseen"
        return min(present, key=lambda s: HEALTH_ORDER[s])

    @property
    def status_label(self) -> str:
        return HEALTH_LABELS[self.status]


#: The first page lists the costliest units only; the rest are summed in one line.


# --- a unit, a site ----------------------------------------------------------------------------


@dataclass(frozen=True)
class UnitMonth:
    """Everything the report says about one unit, raw and judged."""

    unit: UnitInfo
    checks: tuple[Check, ...]
    history: tuple[HistoryPoint, ...]
    flags: tuple[FlagRow, ...]
    leak_rates: tuple[LeakRateRow, ...]
    components: tuple[ComponentRow, ...]
    added_kg_month: float
    current: Check | None
    as_left: Check | None
    health: Health
    story: Story
    energy: EnergyEstimate | None
    actions: tuple[str, ...]

    @property
    def trend(self) -> Trend:
        return self.story.trend


@dataclass(frozen=True)
class SiteMonth:
    """A site-month as plain data: the input of the charts and the templates."""

    site: SiteInfo
    month: Month
    window_start: Month
    #: When the flags were read: the end of the month, or when the report was made if the
    #: month was not over yet.
    as_of: datetime
    units: tuple[UnitMonth, ...]
    visits: tuple[VisitInfo, ...]
    refrigerant: site_leaks.SiteLeakTotals
    overview: SiteOverview
    attention: tuple[UnitMonth, ...]
    algorithm_versions: tuple[str, ...]
    glide_choices: tuple[str, ...]
    leak_rules: tuple[tuple[str, str], ...]
    #: Where the flags' limits come from, taken out of their texts for the methods appendix.
    provenance: tuple[str, ...] = ()

    @property
    def month_closed(self) -> bool:
        """The flags are read at the month's end at the site (the month was over when it
        was made)."""
        return self.as_of >= self.month.end_in(ZoneInfo(self.site.time_zone))

    @property
    def has_visits(self) -> bool:
        return bool(self.visits)

    @property
    def algorithm_version(self) -> str:
        """The diagnosis algorithm version(s) behind the numbers, as stored on the report."""
        return ", ".join(self.algorithm_versions)
