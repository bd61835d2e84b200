"""The batch run: every reading set of a batch judged at once, on numpy columns.

``diagnose_batch`` goes in stages, each over the whole batch: the saturation temperatures and
the targets' pressures (``_saturation``), the derived values (superheat, subcooling, TD,
split...), each metric graded against its target with what is excused (``grading.py``: a
head the unit's control holds up, a compressor found off, a defrost), the energy penalty of
a condenser off its target, and the signals and findings. Nothing here writes text or a
stored row: the result is columns (``BatchResult``), turned into the stored form by
``encode.py``.

Saturation temperatures come from ``saturation`` (dew and bubble, see ``targets.py`` for
the glide choice), gauge pressures are made absolute with the standard atmosphere at the
site's elevation. Cycle metrics (TD, split, superheat, subcooling, compression ratio,
discharge temperature) are not scored when the compressor is reported stopped. R-744 with the
head above its critical pressure has no condensing temperature and no subcooling: the
gas-cooler approach and the head pressure are scored instead.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
from numpy.typing import ArrayLike, NDArray

from diagnostics.core import (
    atmosphere,
    design,
    electrical,
    energy,
    findings,
    grading,
    rule_firing,
    saturation,
)
from diagnostics.core import scoring as sc
from diagnostics.core import targets as tg
from diagnostics.core.grading import MetricColumns
from diagnostics.core.inputs import ReadingColumns, UnitColumns
from diagnostics.core.numeric import FloatArray
from diagnostics.core.signals import derive_signals
from diagnostics.core.types import HEAD_PRESSURE_CONTROLS, STATUSES, DerivedValues, UnitDesign

#: Bump whenever a change alters any stored result; ``manage.py rescore`` keys on it.
ALGORITHM_VERSION = "2026.1"

#: Head-pressure controls that stop the condenser fans to hold the head.
_FAN_CONTROLS = np.array(
    [HEAD_PRESSURE_CONTROLS.index(k) for k in ("fan_cycling", "variable_speed", "other")]
)

DERIVED_NAMES: tuple[str, ...] = tuple(DerivedValues.__dataclass_fields__)


@dataclass(frozen=True)
class BatchResult:
    """Columnar results of ``diagnose_batch``; ``diagnose.row_diagnosis`` gives one row as
    dataclasses, ``encode.documents`` every row in its stored form."""

    algorithm_version: str
    score: FloatArray
    metrics: Mapping[str, MetricColumns]
    derived: Mapping[str, FloatArray]
    #: Saturation targets per row: evaporating and condensing temperature and gauge pressure
    #: (``evaporating_c``, ``suction_kpa_gauge``, ...), with the edges of their ok bands
    #: (``evaporating_c_low``, ``suction_kpa_gauge_high``, ...).
    saturation_targets: Mapping[str, FloatArray]
    finding_mask: NDArray[np.uint32]
    finding_confidence: FloatArray
    energy_penalty_pct: FloatArray
    signals: Mapping[str, NDArray[np.bool_]]
    # kept for building rows lazily
    units: UnitColumns = field(repr=False)
    unit_index: NDArray[np.intp] = field(repr=False)
    readings: ReadingColumns = field(repr=False)
    #: Design quantities per unit (index with ``unit_index``), with their origins.
    unit_targets: design.DesignTargets = field(repr=False)
    atmosphere_kpa: FloatArray = field(repr=False)

    def __len__(self) -> int:
        return int(self.score.shape[0])

    @property
    def finding_codes(self) -> tuple[str, ...]:
        """Finding code of each bit of ``finding_mask``, lowest bit first."""
        return findings.RULE_CODES

    def status_names(self, metric: str) -> NDArray[np.str_]:
        """The status of a metric as strings (built on demand for the whole batch)."""
        return np.asarray(STATUSES)[self.metrics[metric].status]


def _finite(x: FloatArray) -> FloatArray:
    return np.where(np.isfinite(x), x, np.nan)


def _atmosphere_kpa(elevation_m: ArrayLike, n: int) -> FloatArray:
    """Standard-atmosphere pressure per row; NaN (pressures unscored) for an impossible
    elevation, so one bad site cannot stop a batch."""
    z = np.broadcast_to(np.asarray(elevation_m, dtype=np.float64), (n,))
    usable = np.isfinite(z) & (z >= atmosphere.MIN_ELEVATION_M) & (z <= atmosphere.MAX_ELEVATION_M)
    atm = np.full(n, np.nan)
    if usable.any():
        atm[usable] = atmosphere.standard_pressure_kpa(z[usable])
    return atm


#: Pressure step for the slope of a saturation curve at a reading, kPa.
SLOPE_STEP_KPA = 1.0

#: Up to this many designs, a batch's unit columns and targets are kept for the next call.
_FEW_UNITS = 4


@dataclass(frozen=True)
class _Saturation:
    """The saturation stage: absolute pressures, saturation temperatures at the readings
    and the targets (temperature and both band edges, stacked) with their pressures."""

    p_s: FloatArray
    p_h: FloatArray
    evap_dew: FloatArray
    evap_bub: FloatArray
    cond_dew: FloatArray
    cond_bub: FloatArray
    #: The saturation curves' slopes at the gauges' readings, for the instruments' error.
    slope_s: FloatArray
    slope_h: FloatArray
    t_evap: FloatArray
    t_cond: FloatArray
    p_evap: FloatArray
    p_cond: FloatArray
    t_cond_target_dew: FloatArray
    transcritical: NDArray[np.bool_]


def _saturation(
    uc: UnitColumns,
    ref_code: NDArray[np.intp],
    r: ReadingColumns,
    t: design.DesignTargets,
    atm: FloatArray,
) -> _Saturation:
    """Saturation temperatures at the readings, and the targets from the reading's
    conditions (box falls back to the design box), each with the edges of its ok band: the
    TD and split bands of the scoring table."""
    n = len(r)
    p_s = np.where(r.suction_kpa_gauge + atm > 0, r.suction_kpa_gauge + atm, np.nan)
    p_h = np.where(r.head_kpa_gauge + atm > 0, r.head_kpa_gauge + atm, np.nan)
    td, split = t.evap_td_k, t.condenser_split_k
    box_for_target = np.where(np.isnan(r.box_temp_c), t.box_temp_c.value, r.box_temp_c)
    t_evap_target = box_for_target - td.value
    t_cond_target = np.where(t.water_cooled, np.nan, r.entering_air_temp_c + split.value)
    evap_base, cond_base = t_evap_target + td.value, t_cond_target - split.value
    t_evap = np.stack([t_evap_target, evap_base - td.high, evap_base - td.low])
    t_cond = np.stack([t_cond_target, cond_base + split.low, cond_base + split.high])

    nan = np.full(n, np.nan)
    evap_dew, evap_bub, cond_dew, cond_bub = nan.copy(), nan.copy(), nan.copy(), nan.copy()
    p_crit, t_cond_target_dew = nan.copy(), nan.copy()
    slope_s, slope_h = nan.copy(), nan.copy()
    p_evap, p_cond = np.full((3, n), np.nan), np.full((3, n), np.nan)
    for code, designation in enumerate(uc.refrigerants):
        sel = np.flatnonzero(ref_code == code)
        if sel.size == 0:
            continue
        curve = saturation.table(designation)
        evap_dew[sel] = tg.dew_temp_c(curve, p_s[sel])
        evap_bub[sel] = tg.bubble_temp_c(curve, p_s[sel])
        cond_dew[sel] = tg.dew_temp_c(curve, p_h[sel])
        cond_bub[sel] = tg.bubble_temp_c(curve, p_h[sel])
        slope_s[sel] = (tg.dew_temp_c(curve, p_s[sel] + SLOPE_STEP_KPA) - evap_dew[sel]) / (
            SLOPE_STEP_KPA
        )
        slope_h[sel] = (
            tg.bubble_temp_c(curve, p_h[sel] + SLOPE_STEP_KPA) - cond_bub[sel]
        ) / SLOPE_STEP_KPA
        p_crit[sel] = float(curve.critical_pressure_kpa_abs)
        # target and both band edges in one lookup per side, on each unit's basis
        p_evap[:, sel] = tg.basis_pressure_kpa_abs(curve, t_evap[:, sel], t.basis_mid[sel])
        p_cond[:, sel] = tg.basis_pressure_kpa_abs(curve, t_cond[:, sel], t.basis_mid[sel])
        t_cond_target_dew[sel] = tg.dew_temp_c(curve, p_cond[0, sel])
    transcritical = p_h >= p_crit
    cond_dew[transcritical] = np.nan
    cond_bub[transcritical] = np.nan
    t_cond_target_dew[transcritical] = np.nan
    p_cond[:, transcritical] = np.nan
    t_cond[:, transcritical] = np.nan
    return _Saturation(
        p_s,
        p_h,
        evap_dew,
        evap_bub,
        cond_dew,
        cond_bub,
        slope_s,
        slope_h,
        t_evap,
        t_cond,
        p_evap,
        p_cond,
        t_cond_target_dew,
        transcritical,
    )


def _derived(r: ReadingColumns, t: design.DesignTargets, s: _Saturation) -> dict[str, FloatArray]:
    """The values derived from the readings, TD and split on each unit's basis."""
    evap_on_basis = np.where(t.basis_mid, 0.5 * (s.evap_dew + s.evap_bub), s.evap_dew)
    cond_on_basis = np.where(t.basis_mid, 0.5 * (s.cond_dew + s.cond_bub), s.cond_dew)
    v_unbalance = np.asarray(electrical.unbalance_pct(r.supply_volts))
    return {
        "suction_kpa_abs": s.p_s,
        "head_kpa_abs": s.p_h,
        "evaporating_dew_c": s.evap_dew,
        "evaporating_bubble_c": s.evap_bub,
        "evaporating_c": evap_on_basis,
        "condensing_dew_c": s.cond_dew,
        "condensing_bubble_c": s.cond_bub,
        "condensing_c": cond_on_basis,
        "superheat_k": r.suction_line_temp_c - s.evap_dew,
        "subcooling_k": s.cond_bub - r.liquid_line_temp_c,
        "evaporator_td_k": r.box_temp_c - evap_on_basis,
        "condenser_split_k": np.where(
            t.water_cooled, np.nan, cond_on_basis - r.entering_air_temp_c
        ),
        "compression_ratio": _finite(s.p_h / s.p_s),
        "transcritical": s.transcritical.astype(np.float64),
        "gas_cooler_approach_k": np.where(
            s.transcritical, r.liquid_line_temp_c - r.entering_air_temp_c, np.nan
        ),
        "voltage_unbalance_pct": v_unbalance,
        "current_unbalance_pct": np.asarray(electrical.unbalance_pct(r.compressor_amps)),
        "nema_derating_factor": np.asarray(electrical.nema_derating_factor(v_unbalance)),
    }


def _energy_penalty(
    uc: UnitColumns, ref_code: NDArray[np.intp], split: MetricColumns, s: _Saturation
) -> FloatArray:
    """Energy money only where the condenser is off its target: the split judged and above
    its band. Judged and on target costs nothing; not judged (held, off-cycle) says nothing."""
    off_target = (split.status != sc.NOT_SCORED) & (split.deviation > 0)
    penalty = np.where(split.status != sc.NOT_SCORED, 0.0, np.nan)
    for code, designation in enumerate(uc.refrigerants):
        sel = np.flatnonzero((ref_code == code) & off_target)
        ok = sel[np.isfinite(s.evap_dew[sel] + s.cond_dew[sel] + s.t_cond_target_dew[sel])]
        if ok.size == 0:
            continue
        try:
            penalty[ok] = energy.energy_penalty_pct(
                designation, s.evap_dew[ok], s.cond_dew[ok], s.t_cond_target_dew[ok]
            )
        except ValueError:
            penalty[ok] = np.nan  # no cycle model for this refrigerant: no figure, no guess
    return penalty


def _unit_index(n_units: int, n: int, unit_index: ArrayLike | None) -> NDArray[np.intp]:
    if unit_index is None:
        if n_units != n:
            raise ValueError("one unit per reading, or pass unit_index")
        return np.arange(n, dtype=np.intp)
    idx = np.asarray(unit_index, dtype=np.intp)
    if idx.shape != (n,):
        raise ValueError("unit_index needs one entry per reading")
    return idx


def diagnose_batch(
    units: Sequence[UnitDesign] | UnitColumns,
    readings: ReadingColumns,
    elevation_m: ArrayLike = 0.0,
    unit_index: ArrayLike | None = None,
) -> BatchResult:
    """Diagnose every row of ``readings`` at once.

    ``units`` holds one design per reading, or (with ``unit_index``) the distinct designs
    the readings point at. ``elevation_m`` is the site elevation per row (or one value).
    """
    if isinstance(units, UnitColumns):
        uc, per_unit = units, design.resolve(units)
    elif len(units) <= _FEW_UNITS:
        uc, per_unit = design.columns_and_targets(tuple(units))
    else:
        uc = UnitColumns.from_designs(units)
        per_unit = design.resolve(uc)
    r = readings
    n = len(r)
    idx = _unit_index(len(uc), n, unit_index)
    t = per_unit.take(idx)
    ref_code = uc.refrigerant_code[idx]
    atm = _atmosphere_kpa(elevation_m, n)
    s = _saturation(uc, ref_code, r, t, atm)
    # Stopped as reported; not reported, a suction at or above head says it was not running.
    running = np.where(np.isnan(r.compressor_running) & (s.p_s >= s.p_h), 0.0, r.compressor_running)
    defrost = r.in_defrost == 1.0
    derived = _derived(r, t, s)
    cond_on_basis = derived["condensing_c"]
    # Cold weather: a head the unit's control holds up says nothing about the condenser.
    head = t.head_setpoint_c
    held = (
        (r.entering_air_temp_c + t.condenser_split_k.value < head.value)
        & (cond_on_basis >= head.low)
        & (cond_on_basis <= head.high)
    )
    metrics = grading.grade(
        grading.metric_inputs(r, t, derived, running),
        t,
        (s.slope_s, s.slope_h),
        s.transcritical,
        running,
        defrost,
        held,
    )
    total_points = np.zeros(n)
    judged = np.zeros(n, dtype=bool)
    for m in metrics.values():
        total_points += m.points
        judged |= m.status != sc.NOT_SCORED

    signals = derive_signals(
        {name: (m.measured, m.target, m.deviation, m.status) for name, m in metrics.items()},
        flags={
            "call_for_cooling": r.call_for_cooling,
            # defrosting, the fans stop and the coil carries frost on purpose
            "compressor_running": np.where(defrost, np.nan, running),
            "coil_iced": r.coil_iced,
            "evaporator_fans_running": r.evaporator_fans_running,
            "condenser_fan_running": r.condenser_fan_running,
            "sight_glass": r.sight_glass,
        },
        compression_ratio_typical_low=t.cr_typical_low,
        receiverless=t.has_receiver == 0.0,
        # a control that cycles or slows the fans stops them while the head is in its band
        condenser_fan_may_stop=np.isin(uc.control_code[idx], _FAN_CONTROLS)
        & ~(cond_on_basis > head.high),
        receiver_backed_up=(t.has_receiver == 1.0) & ~held,
    )
    fired = rule_firing.evaluate(signals, n)
    sat_targets: dict[str, FloatArray] = {}
    for side, temps, pressure, pressures in (
        ("evaporating_c", s.t_evap, "suction_kpa_gauge", s.p_evap),
        ("condensing_c", s.t_cond, "head_kpa_gauge", s.p_cond),
    ):
        for k, suffix in enumerate(("", "_low", "_high")):
            sat_targets[side + suffix] = temps[k]
            sat_targets[pressure + suffix] = pressures[k] - atm
    return BatchResult(
        algorithm_version=ALGORITHM_VERSION,
        score=sc.visit_score(total_points, judged),
        metrics=metrics,
        derived=derived,
        saturation_targets=sat_targets,
        finding_mask=fired.mask,
        finding_confidence=fired.confidence,
        energy_penalty_pct=_energy_penalty(uc, ref_code, metrics["condenser_split"], s),
        signals=signals,
        units=uc,
        unit_index=idx,
        readings=readings,
        unit_targets=per_unit,
        atmosphere_kpa=atm,
    )
