"""Our own words for what Rimewatch judges (no database): evidence, verdicts, groups, and
the provenance kept out of the customer's copy."""

from __future__ import annotations

from diagnostics.core.findings import RULES_BY_CODE
from diagnostics.core.scoring import SCORING_TABLE
from reports import words


def test_it_tells_a_findings_weight_by_the_signs_that_agree():
    """One sign, two signs or more are said as such, never as a percentage."""
    assert words.evidence_strength(1) == "a single sign"
    assert words.evidence_strength(2) == "some evidence: 2 signs agree"
    assert words.evidence_strength(4) == "strong evidence: 4 signs agree"
    assert "%" not in "".join(words.evidence_strength(n) for n in range(6))


def test_it_names_what_a_finding_could_also_be_and_the_check_that_decides():
    """Alternatives are named by their titles (or their codes spelt out, for a code the
    core does not name yet) with the deciding check; no alternative, no sentence."""
    text = words.could_also_be(
        ["non_condensables", "a_later_code"],
        "with the unit off, compare the standing pressure with the saturation pressure",
    )
    assert text == (
        f"Could also be: {RULES_BY_CODE['non_condensables'].title.lower()}; a later code. "
        "To tell them apart: with the unit off, compare the standing pressure with the "
        "saturation pressure."
    )
    assert words.could_also_be([], "anything") == ""
    assert words.could_also_be(None, None) == ""


def test_every_scored_metric_belongs_to_a_group():
    """Each metric of the scoring table sits in one group by what it tells, so no reading
    falls under 'Other readings' today; an ice machine's box readings are left out."""
    grouped = [m for g in words.READING_GROUPS for m in g.metrics]
    assert sorted(grouped) == sorted(SCORING_TABLE)
    metrics = [{"name": n, "status": "ok"} for n in ("superheat", "box_temp", "new_metric")]
    groups = words.group_readings(metrics)
    assert [g.key for g, _ in groups] == ["cooling", "charge", "other"]
    ice = words.group_readings(metrics, application="ice_machine")
    assert [g.key for g, _ in ice] == ["charge", "other"]


def test_a_verdict_says_which_way_a_reading_is_off():
    """A watch above its band is 'high', a fault below it 'far too low'."""
    assert words.verdict("watch", 1.2).word == "high"
    assert words.verdict("fault", -3.0).word == "far too low"
    assert words.verdict("ok", 0.0).word == "in range"
    assert words.verdict("not_scored").word == "not judged"


def test_a_reading_reads_as_one_line_against_its_aim():
    """Both edges: aim and band; one edge: how far is fine, with an ideal below it as the
    aim and a limit beyond it as the limit."""
    shown = words.reading_sentence(12.0, 5.0, 3.0, 7.0, lambda v: f"{v:g} K")
    assert shown == "12 K; aim 5 K, fine from 3 K to 7 K"
    one_sided = words.reading_sentence(2400, 2800, None, 2520, lambda v: f"{v:g} kPa")
    assert one_sided == "2400 kPa; fine up to 2520 kPa, limit 2800 kPa"
    ideal = words.reading_sentence(0.3, 0.0, None, 1.0, lambda v: f"{v:g} %")
    assert ideal == "0.3 %; aim 0 %, fine up to 1 %"
    at_edge = words.reading_sentence(7.5, 10.0, None, 10.0, lambda v: f"{v:g} A")
    assert at_edge == "7.5 A; fine up to 10 A"
    unjudged = words.reading_sentence(None, None, None, None, str, "no RLA on the nameplate")
    assert unjudged == "not judged: no RLA on the nameplate"


def test_provenance_asides_leave_the_customers_copy():
    """A bracketed aside marking a value 'from memory', 'common practice' or ours goes to
    the appendix, nested brackets and all; other asides (and 'hours') stay."""
    text = (
        "leak rate 31.0 % (rolling average) over the 20 % threshold (40 CFR 84.106: 15 lb "
        "or more (GWP above 53 from memory))"
    )
    kept, moved = words.split_provenance(text)
    assert kept == "leak rate 31.0 % (rolling average) over the 20 % threshold"
    assert moved == ("40 CFR 84.106: 15 lb or more (GWP above 53 from memory)",)
    assert words.split_provenance("runs 16 hours (a day)") == ("runs 16 hours (a day)", ())
    assert words.split_provenance("limit 5 K (ours: a margin)")[0] == "limit 5 K"
