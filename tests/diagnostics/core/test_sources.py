"""Rule values read back with their sources, or as configured once changed."""

from __future__ import annotations

import dataclasses

from diagnostics.core.costs import DEFAULT_COST_RULES
from diagnostics.core.sources import describe_rules, source_of
from diagnostics.core.start_risk_rules import DEFAULT_START_RULES


def test_it_reads_back_the_source_of_each_default() -> None:
    """A default value is described with the source written beside it."""
    described = {name: source for name, _, source in describe_rules(DEFAULT_START_RULES)}
    assert described["voltage_tolerance_pct"] == "NEMA MG-1 12.44: +/-10 % of nameplate"
    assert source_of(DEFAULT_COST_RULES, "days_per_month") == "calendar average"


def test_a_changed_value_reads_as_configured() -> None:
    """A value changed from its default no longer claims the default's source."""
    changed = dataclasses.replace(DEFAULT_COST_RULES, power_factor=0.9)
    assert source_of(changed, "power_factor") == "configured"
    assert source_of(changed, "days_per_month") == "calendar average"
    rows = {name: (value, source) for name, value, source in describe_rules(changed)}
    assert rows["power_factor"] == (0.9, "configured")
