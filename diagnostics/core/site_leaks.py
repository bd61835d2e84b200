"""A site's refrigerant added over a period, by refrigerant, in kg and CO2e."""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from datetime import date

from diagnostics.core import refrigerants
from diagnostics.core.appliance_leaks import RefrigerantAddition


@dataclass(frozen=True)
class UnitAdditions:
    """One unit's refrigerant and its additions, for site totals."""

    unit_id: int
    refrigerant: str
    additions: tuple[RefrigerantAddition, ...]


@dataclass(frozen=True)
class RefrigerantTotal:
    refrigerant: str
    gwp: float
    added_kg: float
    leak_related_kg: float

    @property
    def co2e_kg(self) -> float:
        return self.added_kg * self.gwp

    @property
    def leak_related_co2e_kg(self) -> float:
        return self.leak_related_kg * self.gwp


@dataclass(frozen=True)
class SiteLeakTotals:
    """Refrigerant added at a site over a period, in kg and CO2e (kg x GWP, AR4 100-year)."""

    start: date
    end: date
    by_refrigerant: tuple[RefrigerantTotal, ...]

    @property
    def added_kg(self) -> float:
        return sum(t.added_kg for t in self.by_refrigerant)

    @property
    def leak_related_kg(self) -> float:
        return sum(t.leak_related_kg for t in self.by_refrigerant)

    @property
    def co2e_tonnes(self) -> float:
        return sum(t.co2e_kg for t in self.by_refrigerant) / 1000.0

    @property
    def leak_related_co2e_tonnes(self) -> float:
        return sum(t.leak_related_co2e_kg for t in self.by_refrigerant) / 1000.0


def site_totals(units_: Iterable[UnitAdditions], start: date, end: date) -> SiteLeakTotals:
    """Totals of the additions dated start..end inclusive, by refrigerant (GWP per 84.64(b))."""
    added: dict[str, float] = {}
    leak: dict[str, float] = {}
    for u in units_:
        name = refrigerants.normalise_designation(u.refrigerant)
        for a in u.additions:
            if start <= a.occurred_on <= end:
                added[name] = added.get(name, 0.0) + a.amount_kg
                if a.excluded_reason is None:
                    leak[name] = leak.get(name, 0.0) + a.amount_kg
    return SiteLeakTotals(
        start=start,
        end=end,
        by_refrigerant=tuple(
            RefrigerantTotal(name, refrigerants.get(name).gwp_ar4, added[name], leak.get(name, 0.0))
            for name in sorted(added)
        ),
    )
