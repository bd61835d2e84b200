"""The unit and the reading the visit-diagnosis tests start from: a receiverless R-404A
cooler with every nameplate and capacitor value, and a full healthy reading of it."""

from __future__ import annotations

from diagnostics.core.types import Reading, UnitDesign

ATM = 101.325
R404A_MT = UnitDesign(
    "R-404A",
    "medium_temp",
    metering_device="txv",
    has_receiver=False,
    rla_a=10.0,
    lra_a=60.0,
    nameplate_volts=230.0,
    phase=1,
    run_capacitor_uf=45.0,
    start_capacitor_min_uf=88.0,
    start_capacitor_max_uf=108.0,
    high_pressure_cutout_kpa_gauge=2800.0,
)
FULL = Reading(
    box_temp_c=2.0,
    entering_air_temp_c=24.0,
    suction_kpa_gauge=330.0,
    suction_line_temp_c=0.0,
    head_kpa_gauge=1550.0,
    liquid_line_temp_c=33.0,
    discharge_line_temp_c=85.0,
    compressor_amps=(8.5,),
    supply_volts=(228.0,),
    run_capacitor_uf=44.0,
    start_capacitor_uf=95.0,
    compressor_running=True,
    condenser_fan_running=True,
    evaporator_fans_running=True,
    coil_iced=False,
    sight_glass="clear",
)


def _metrics(result) -> dict:
    return {m.name: m for m in result.metrics}
