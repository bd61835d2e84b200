"""Flag sentences are written in the reader's units when read.

Conversion factors: 1 K = 1.8 F (a difference), 1 psi = 6.894757 kPa, 1 lb = 0.45359237 kg
(NIST SP 811, Appendix B); the conversions themselves are checked in ``test_units.py``.
"""

from __future__ import annotations

from diagnostics.core import wording

US = {"temperature": "F", "temperature_difference": "F", "pressure": "psig", "mass": "lb"}
SI = {"temperature": "C", "temperature_difference": "K", "pressure": "kPa", "mass": "kg"}


def test_it_writes_each_quantity_in_the_readers_units() -> None:
    """A leak entered in pounds is read in pounds by a US office: 1.5876 kg is 3.50 lb; a
    5 K split excess is 9.0 F; 1,500 kPa gauge is 218 psig (217.56)."""
    quantities = (("added", 1.5876, "kg"), ("excess", 5.0, "K"), ("head", 1500.0, "kPa_gauge"))
    template = "{added} added; split {excess} over; head {head}"
    assert (
        wording.fill(template, quantities, US) == "3.50 lb added; split 9.0 °F over; head 218 psig"
    )
    assert (
        wording.fill(template, quantities, SI)
        == "1.59 kg added; split 5.0 K over; head 1500 kPa gauge"
    )


def test_a_temperature_is_converted_as_a_temperature_and_a_rate_as_a_difference() -> None:
    """0 C is 32 F; a slope of 1 K a year is 1.8 F a year (a difference, no offset)."""
    quantities = (("t", 0.0, "C"), ("slope", 1.0, "K/year"))
    assert wording.fill("{t} and {slope} a year", quantities, US) == "32.0 °F and 1.8 °F a year"


def test_a_sentence_without_places_or_with_an_unknown_place_is_kept() -> None:
    """Stored prose (no places) comes back unchanged; a place with no quantity stays named."""
    assert wording.fill("planned maintenance 12 days overdue", (), US) == (
        "planned maintenance 12 days overdue"
    )
    assert wording.fill("limit {missing}", (), US) == "limit {missing}"
