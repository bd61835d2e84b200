"""Physical limits for stored measurements and design data, in SI.

One table serves the field validators (messages that name the field) and the database
check constraints (what must never be stored), so the two can never disagree. The bounds
are wide on purpose: they refuse the impossible (a gauge below a perfect vacuum, a 500 F
box, a 10,000 uF capacitor), not the unusual; scoring judges the unusual.

The date ranges at the end (``SERVICE_ERA``, ``RECORD_DATES``, the visit window and the
booking range) are judged by ``fleet.validation`` for the models, the pages' query
parameters and the fleet-wide jobs alike.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

#: A perfect vacuum at sea level reads -101.325 kPa (-14.7 psig) on a gauge; nothing reads lower.
PERFECT_VACUUM_KPA_GAUGE = -101.325


@dataclass(frozen=True)
class Limit:
    low: float
    high: float
    why: str


READING_LIMITS: dict[str, Limit] = {
    "box_temp_c": Limit(-60, 50, "colder than any freezer or hotter than any room"),
    "entering_air_temp_c": Limit(-45, 65, "outside the air temperatures condensers meet"),
    "suction_kpa_gauge": Limit(
        PERFECT_VACUUM_KPA_GAUGE, 8000, "below a perfect vacuum or above any suction side"
    ),
    "suction_line_temp_c": Limit(-70, 80, "outside what a suction line can read"),
    "head_kpa_gauge": Limit(
        PERFECT_VACUUM_KPA_GAUGE, 15000, "below a perfect vacuum or above any discharge side"
    ),
    "liquid_line_temp_c": Limit(-60, 90, "outside what a liquid line can read"),
    "discharge_line_temp_c": Limit(-40, 200, "outside what a discharge line can read"),
    "compressor_amps_1": Limit(
        0, 1000, "amps cannot be negative; above 1000 A is not a refrigeration compressor"
    ),
    "compressor_amps_2": Limit(
        0, 1000, "amps cannot be negative; above 1000 A is not a refrigeration compressor"
    ),
    "compressor_amps_3": Limit(
        0, 1000, "amps cannot be negative; above 1000 A is not a refrigeration compressor"
    ),
    "supply_volts_1": Limit(
        0, 1000, "volts cannot be negative; above 1000 V is not a low-voltage supply"
    ),
    "supply_volts_2": Limit(
        0, 1000, "volts cannot be negative; above 1000 V is not a low-voltage supply"
    ),
    "supply_volts_3": Limit(
        0, 1000, "volts cannot be negative; above 1000 V is not a low-voltage supply"
    ),
    "run_capacitor_uf": Limit(0, 200, "run capacitors are at most a few hundred microfarads"),
    "start_capacitor_uf": Limit(
        0, 2000, "start capacitors are at most a couple of thousand microfarads"
    ),
}

UNIT_LIMITS: dict[str, Limit] = {
    "full_charge_kg": Limit(0.01, 10000, "a charge must be positive"),
    "design_box_temp_c": Limit(-60, 50, "outside any refrigerated box"),
    "design_evap_td_k": Limit(0.5, 30, "an evaporator TD is a few kelvin"),
    "design_condenser_split_k": Limit(1, 40, "a condenser split is a few kelvin"),
    "superheat_min_k": Limit(0, 40, "superheat cannot be negative"),
    "superheat_max_k": Limit(0, 40, "superheat cannot be negative"),
    "high_pressure_cutout_kpa_gauge": Limit(300, 15000, "outside any high-pressure control"),
    "nameplate_volts": Limit(90, 700, "outside compressor supply voltages"),
    "nameplate_volts_max": Limit(90, 700, "outside compressor supply voltages"),
    "head_pressure_setpoint_c": Limit(
        10, 60, "outside the condensing temperatures a head-pressure control is set to hold"
    ),
    "hertz": Limit(50, 60, "supply frequency is 50 or 60 Hz"),
    "rla_a": Limit(0.1, 1000, "rated-load amps must be positive"),
    "lra_a": Limit(0.1, 5000, "locked-rotor amps must be positive"),
    "pm_interval_days": Limit(7, 730, "between a week and two years"),
}

COMPONENT_LIMITS: dict[str, Limit] = {
    "rated_uf": Limit(0.1, 2000, "a capacitor is marked with a few to a couple of thousand uF"),
    "tolerance_pct": Limit(0.5, 30, "a printed tolerance is a few percent (commonly 5, 6 or 10 %)"),
}

SITE_LIMITS: dict[str, Limit] = {
    "elevation_m": Limit(-500, 5000, "outside inhabited elevations"),
    "design_ambient_c": Limit(-10, 60, "outside design dry-bulb temperatures"),
}

EVENT_LIMITS: dict[str, Limit] = {
    "amount_kg": Limit(0, 5000, "an amount cannot be negative"),
}

#: Refrigerant added or recovered in one event beyond this many times the unit's full
#: charge is refused unless the request confirms it. Ours: a full recharge after a recovery
#: is about one full charge, and nameplate charges are approximate (a line set added on
#: site), so a quarter more is still believable; far more is usually a slipped digit or unit.
CONFIRM_AMOUNT_ABOVE_FULL_CHARGE = 1.25


@dataclass(frozen=True)
class DateRange:
    """Calendar days from ``first`` to ``last``, both included."""

    first: dt.date
    last: dt.date
    why: str

    def __contains__(self, day: object) -> bool:
        if isinstance(day, dt.datetime):
            day = day.date()
        return isinstance(day, dt.date) and self.first <= day <= self.last

    def instants(self) -> tuple[dt.datetime, dt.datetime]:
        """The range as UTC instants, [start of ``first``, start of the day after ``last``):
        bounds a query puts on a stored time, so no row outside reaches a zone conversion."""
        start = dt.datetime.combine(self.first, dt.time.min, dt.UTC)
        return start, dt.datetime.combine(self.last + dt.timedelta(days=1), dt.time.min, dt.UTC)


#: The times a visit or a reading may carry, and the days a page may be asked for
#: (``?week=``, ``?day=``). Before 1900 a zone's offset may be local mean time (Chicago's
#: was -05:50:36), which an RFC 3339 date-time cannot even write; ours: nothing this
#: service records happened before 1970 or is planned past 2199.
SERVICE_ERA = DateRange(
    dt.date(1970, 1, 1), dt.date(2199, 12, 31), "outside the years this service records"
)


def day_on_clock(moment: dt.datetime, zone: dt.tzinfo) -> dt.date:
    """The day of a stored time on ``zone``'s clock. A time outside ``SERVICE_ERA``
    (written straight into the database) keeps its UTC day instead: converting year 1 or
    9999 to a zone can overflow, and the row must still sort and show, not fail the page."""
    return moment.astimezone(zone).date() if moment in SERVICE_ERA else moment.date()


#: The days a unit or a part may be installed or retired on: equipment older than our
#: records is real (a 1960s walk-in), so the range starts earlier than ``SERVICE_ERA``. A
#: stored date outside it (written before this check, or straight into the database) is
#: one no job can do date arithmetic with: fleet-wide jobs skip that row and say so.
RECORD_DATES = DateRange(
    dt.date(1900, 1, 1), dt.date(2199, 12, 31), "outside any equipment's service life"
)

#: The office pages book a visit starting at most this far back: the refrigerant rules
#: keep service records for three years (40 CFR 82.157(l)), so a visit older than that is
#: history to import, not one to book.
VISIT_BOOKING_BACK = dt.timedelta(days=3 * 365)
#: ... and at most this far ahead: the longest planned-maintenance interval (``pm_interval_days``
#: up to 730) is two years, so no planned visit is due later than that.
VISIT_BOOKING_AHEAD = dt.timedelta(days=730)
#: The longest window a visit may have (pages and API): a compressor change-out may take
#: two working days; longer work is booked as several visits, one per trip.
VISIT_WINDOW_LONGEST = dt.timedelta(days=2)
