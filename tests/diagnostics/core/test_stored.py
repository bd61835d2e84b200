"""The stored document: what it holds, as its module documents it, and reading it back."""

from __future__ import annotations

import math
import random

import orjson

from diagnostics.core import encode, findings, stored
from diagnostics.core.diagnose import diagnose_batch, read_details
from diagnostics.core.inputs import ReadingColumns
from diagnostics.core.scoring import SCORING_TABLE
from diagnostics.core.types import Reading, UnitDesign
from tests.diagnostics.core.test_diagnose_batch import _varied_batch

COOLER = UnitDesign(
    "R-404A",
    "medium_temp",
    metering_device="txv",
    has_receiver=True,
    design_condenser_split_k=11.0,
    rla_a=10.0,
    nameplate_volts=230.0,
    phase=1,
)
RUNNING = Reading(
    box_temp_c=4.0,
    entering_air_temp_c=30.0,
    suction_kpa_gauge=330.0,
    suction_line_temp_c=6.0,
    head_kpa_gauge=1900.0,
    liquid_line_temp_c=38.0,
    compressor_amps=(8.5,),
    supply_volts=(228.0,),
    compressor_running=True,
    sight_glass="bubbles",
)


def _documents(*readings: Reading) -> list[dict]:
    result = diagnose_batch([COOLER] * len(readings), ReadingColumns.from_readings(readings))
    return [orjson.loads(text) for text in encode.documents(result)]


def test_it_holds_numbers_and_codes_as_documented():
    """A document is plain JSON of numbers and codes, no text: its version, the
    refrigerant, the unit's design answers and where each target came from, the saturation
    targets as [target, low, high], every metric that applies with its status and values,
    the findings by code with their confidence, and the signals that held."""
    (doc,) = _documents(RUNNING)
    assert set(doc) == {
        "document_version",
        "refrigerant",
        "design",
        "box_measured",
        "saturation",
        "metrics",
        "findings",
        "signals",
    }
    assert doc["document_version"] == stored.DOCUMENT_VERSION == 1
    assert doc["refrigerant"] == "R-404A"
    assert doc["design"]["origins"]["condenser_split_k"] == "design"
    assert doc["design"]["origins"]["evap_td_k"] == "application_default"
    assert doc["design"]["basis"] == "dew"
    assert set(doc["saturation"]) == set(stored.SATURATION_KEYS)
    assert all(len(v) == 3 for v in doc["saturation"].values())
    split = doc["metrics"]["condenser_split"]
    assert split[0] in ("ok", "watch", "fault", "not_scored")
    assert len(split) in (1 + len(stored.METRIC_VALUES), 2 + len(stored.METRIC_VALUES))
    assert set(doc["findings"]) <= set(findings.RULE_CODES)
    assert all(set(f) == {"confidence"} for f in doc["findings"].values())
    assert "bubbles" in doc["signals"]
    assert set(doc["signals"]) <= set(findings.SIGNALS)
    numbers = [
        x for m in doc["metrics"].values() for x in m[1:] if isinstance(x, float) and abs(x) < 1e4
    ]
    assert all(round(x, stored.DECIMALS) == x for x in numbers)


def test_it_names_why_a_metric_went_unscored_and_leaves_out_what_does_not_apply():
    """A compressor found off: the cycle metrics say ``compressor_off``, a reading not
    taken is named under ``missing`` (with ``target`` where the design gives none), and
    the running amps, which do not apply to a stopped compressor, are left out."""
    stopped = Reading(box_temp_c=4.0, compressor_running=False, compressor_amps=(0.0,))
    (doc,) = _documents(stopped)
    metrics = doc["metrics"]
    assert metrics["superheat"][0] == "not_scored"
    assert metrics["superheat"][-1] == "compressor_off"
    assert "running_amps" not in metrics
    assert metrics["standstill_amps"][0] == "not_scored"
    assert metrics["standstill_amps"][-1] == ["target"]
    assert metrics["discharge_line_temp"][-1] == "compressor_off"
    assert metrics["supply_voltage"][-1] == ["supply_volts"]
    assert metrics["box_temp"][0] != "not_scored"
    assert len(metrics["box_temp"]) == 1 + len(stored.METRIC_VALUES)
    assert set(metrics) <= set(SCORING_TABLE)


def test_it_reads_a_document_whatever_the_order_of_its_keys():
    """PostgreSQL's jsonb keeps no key order: a document with every object's keys shuffled
    reads to the same details."""

    def shuffled(value, rng: random.Random):
        if isinstance(value, dict):
            items = list(value.items())
            rng.shuffle(items)
            return {k: shuffled(v, rng) for k, v in items}
        if isinstance(value, list):
            return [shuffled(v, rng) for v in value]
        return value

    docs = _documents(RUNNING, Reading(box_temp_c=4.0, compressor_running=False))
    mixed = [shuffled(d, random.Random(k)) for k, d in enumerate(docs)]
    assert [list(d) for d in mixed] != [list(d) for d in docs]
    assert read_details(mixed) == read_details(docs)


def test_it_reads_the_numbers_a_trend_draws_without_the_texts():
    """``read_numbers`` gives a saturation target and a metric's band edge from the
    documents as they are (the trend charts' targets), NaN where a document has none."""
    doc = _documents(RUNNING)[0]
    columns = stored.read_numbers(
        [doc, {}], ["condensing_c", "superheat:low", "head_kpa_gauge_high"]
    )
    assert columns["condensing_c"][0] == doc["saturation"]["condensing_c"][0]
    assert columns["superheat:low"][0] == doc["metrics"]["superheat"][3]
    assert columns["head_kpa_gauge_high"][0] == doc["saturation"]["head_kpa_gauge"][2]
    assert all(math.isnan(column[1]) for column in columns.values())


def test_it_writes_findings_alike_whether_cases_share_one_key_or_not(monkeypatch):
    """Findings are written once per case of a key packing which rules fired with what
    confidence; where too many cases would overflow that key, each row is written on its
    own, to the same text."""
    result = _varied_batch()  # every finding fires somewhere in it
    keyed = encode.documents(result)
    assert sum(bool(orjson.loads(d)["findings"]) for d in keyed) > 10
    monkeypatch.setattr(encode, "_finding_keys", lambda res: None)
    assert encode.documents(result) == keyed
