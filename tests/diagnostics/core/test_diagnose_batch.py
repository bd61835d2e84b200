"""The batch path of the visit diagnosis: one implementation for one post and for many
rows, the columns of a batch, and the stored form read back as diagnosing alone gives."""

from __future__ import annotations

import dataclasses
import itertools
import json

import numpy as np

from diagnostics.core import findings
from diagnostics.core.diagnose import (
    ALGORITHM_VERSION,
    ReadingColumns,
    UnitColumns,
    details,
    diagnose,
    diagnose_batch,
    diagnose_row,
    read_details,
    row_diagnosis,
)
from diagnostics.core.encode import documents
from diagnostics.core.types import Reading, UnitDesign
from tests.diagnostics.core.cases import FULL, R404A_MT


def test_one_post_and_the_batch_share_one_implementation():
    """diagnose(unit, reading) equals row i of diagnose_batch over many rows (same scores,
    metrics, findings), including with readings pointing at shared units by index."""
    units = [R404A_MT, UnitDesign("R-448A", "low_temp", has_receiver=True)]
    readings = [
        FULL,
        dataclasses.replace(FULL, suction_line_temp_c=12.0, sight_glass="bubbles"),
        Reading(box_temp_c=-20.0, suction_kpa_gauge=80.0, suction_line_temp_c=-30.0),
        Reading(),
    ]
    index = np.array([0, 0, 1, 1])
    batch = diagnose_batch(
        UnitColumns.from_designs(units), ReadingColumns.from_readings(readings), 0.0, index
    )
    assert len(batch) == 4
    for i, r in enumerate(readings):
        single = diagnose(units[index[i]], r)
        assert row_diagnosis(batch, i) == single
        if single.score is None:
            assert np.isnan(batch.score[i])
        else:
            assert batch.score[i] == single.score


def test_the_batch_reports_columns_and_finding_bits():
    """The columnar result carries one score per row, per-metric status codes and a finding
    bit mask whose set bits are the findings of the row."""
    readings = [FULL, dataclasses.replace(FULL, compressor_running=False, compressor_amps=(57.0,))]
    batch = diagnose_batch([R404A_MT, R404A_MT], ReadingColumns.from_readings(readings))
    assert batch.score.shape == (2,)
    assert batch.status_names("standstill_amps").tolist()[1] == "fault"
    bit = batch.finding_codes.index("compressor_not_starting")
    assert not batch.finding_mask[0] >> bit & 1
    assert batch.finding_mask[1] >> bit & 1


def _varied_inputs():
    """Synthetic rows that fire every finding and hit every special case: a grid around
    FULL on a receiverless R-404A cooler, a compressor stalled at start, a low supply, an
    empty reading, R-744 above its critical point, a water-cooled unit, the R-448A glide
    blend, and a site whose elevation is unusable."""
    r448a = UnitDesign(
        "R-448A",
        "low_temp",
        has_receiver=True,
        rla_a=12.0,
        lra_a=70.0,
        temperature_basis="mid_point",
    )
    r744 = UnitDesign("R-744", "medium_temp", has_receiver=True)
    water = dataclasses.replace(R404A_MT, condenser_type="water")
    units = [R404A_MT, r448a, r744, water]
    readings, index = [], []
    glass = ("clear", "bubbles", "none")
    grid = itertools.product((250.0, 330.0, 500.0), (-8.0, 0.0, 12.0), (900.0, 1550.0, 2300.0))
    for n, (suction, suction_line, head) in enumerate(grid):
        for liquid in (20.0, 33.0, 45.0):
            readings.append(
                dataclasses.replace(
                    FULL,
                    box_temp_c=8.0 if n % 2 else -2.0,
                    suction_kpa_gauge=suction,
                    suction_line_temp_c=suction_line,
                    head_kpa_gauge=head,
                    liquid_line_temp_c=liquid,
                    sight_glass=glass[n % 3],
                    compressor_amps=((4.0, 8.5, 11.0)[n % 3],),
                )
            )
            index.append(0)
    readings += [
        dataclasses.replace(FULL, compressor_running=False, compressor_amps=(57.0,)),
        dataclasses.replace(FULL, run_capacitor_uf=38.0),
        dataclasses.replace(FULL, supply_volts=(190.0,)),
        dataclasses.replace(FULL, coil_iced=True, evaporator_fans_running=False),
        Reading(),
        Reading(box_temp_c=-20.0, suction_kpa_gauge=80.0, suction_line_temp_c=-30.0),
        dataclasses.replace(FULL, box_temp_c=-22.0, suction_kpa_gauge=120.0, head_kpa_gauge=1500.0),
        Reading(
            entering_air_temp_c=32.0,
            suction_kpa_gauge=2900.0,
            suction_line_temp_c=-3.0,
            head_kpa_gauge=9000.0,
            liquid_line_temp_c=35.0,
        ),
        Reading(entering_air_temp_c=20.0, suction_kpa_gauge=2900.0, head_kpa_gauge=5500.0),
        FULL,
        dataclasses.replace(FULL, supply_volts=(), compressor_amps=()),
        FULL,
    ]
    index += [0, 0, 0, 0, 0, 1, 1, 2, 2, 3, 3, 0]
    elevation = np.zeros(len(readings))
    elevation[-1] = np.nan  # an unusable site elevation: no gauge pressure can be made absolute
    return units, readings, index, elevation


def _varied_batch():
    units, readings, index, elevation = _varied_inputs()
    return diagnose_batch(
        UnitColumns.from_designs(units),
        ReadingColumns.from_readings(readings),
        elevation,
        np.array(index),
    )


def test_the_stored_form_of_a_batch_equals_each_row_diagnosed_alone():
    """The stored documents (what ``manage.py rescore`` stores, built on columns) hold for
    every row exactly what diagnosing that reading alone stores, and read back to the same
    details,
    on a batch where every finding fires, fields are missing, R-744 runs above its critical
    point, a condenser is water-cooled, a blend glides and one site's elevation is unusable;
    the details are plain JSON (no NaN, no tuples)."""
    units, readings, index, elevation = _varied_inputs()
    batch = _varied_batch()
    rows = details(batch)
    fired = {f["code"] for row in rows for f in row["findings"]}
    assert fired == {rule.code for rule in findings.RULES if rule.triggers}
    named = {a for row in rows for f in row["findings"] for a in f["alternatives"]}
    assert "non_condensables" in named
    assert batch.derived["transcritical"].any()
    assert any(m["reason"].startswith("water-cooled") for row in rows for m in row["metrics"])
    assert any("mid-point" in t["source"] for row in rows for t in row["targets"])
    assert json.loads(json.dumps(rows, allow_nan=False)) == rows
    assert len(rows) == len(batch)
    for i, (reading, u, z) in enumerate(zip(readings, index, elevation, strict=True)):
        alone = diagnose_batch([units[u]], ReadingColumns.from_readings([reading]), z)
        assert documents(alone) == documents(batch)[i : i + 1], i
        assert details(alone)[0] == rows[i], i


def test_a_document_of_no_known_version_reads_as_no_details():
    """Nothing stored (an empty document), a document of a version this code does not know
    or no document at all reads as empty details rather than as numbers in the wrong
    places; a current one reads with its metrics and cautions."""
    row = diagnose_row(R404A_MT, FULL)
    unknown = {**row["document"], "document_version": 999}
    good, *blank = read_details([row["document"], {}, unknown, None])
    assert good["metrics"]
    assert good["cautions"]
    for details_read in blank:
        assert details_read == {
            "targets": [],
            "metrics": [],
            "findings": [],
            "cautions": [],
            "glide_choice": "",
        }


def test_a_site_without_a_usable_elevation_keeps_its_temperature_targets_only():
    """With no standard atmosphere for the site, the evaporating and condensing temperature
    targets stand but no gauge-pressure target is stored (there is no absolute to subtract
    from, and a NaN would not be valid JSON)."""
    row = details(_varied_batch())[-1]
    names = {t["name"] for t in row["targets"]}
    assert {"evaporating_temp", "condensing_temp"} <= names
    assert not names & {"suction_pressure", "condensing_pressure"}


def test_the_one_post_path_stores_what_the_dataclass_path_gives():
    """``diagnose_row`` (what a single POST stores) holds the score, the derived values and,
    read back, the very targets, metrics, findings and cautions ``diagnose`` gives, for the
    special cases of the varied batch: a stalled start, a low supply, an iced coil, an empty
    reading, R-448A glide, R-744 above its critical point and a water-cooled unit."""
    units, readings, index, _ = _varied_inputs()
    special = list(zip(readings, index, strict=True))[-12:-1]
    assert len(special) == 11
    for reading, u in special:
        row = diagnose_row(units[u], reading)
        expected = diagnose(units[u], reading)
        assert row["algorithm_version"] == ALGORITHM_VERSION
        assert row["score"] == expected.score
        judged = {m.name for m in expected.metrics if m.status != "not_scored"}
        for name, value in (
            ("superheat", expected.derived.superheat_k),
            ("condenser_split", expected.derived.condenser_split_k),
        ):
            assert row[f"{name}_k"] == (value if name in judged else None)
        (details_read,) = read_details([row["document"]])
        for name in ("targets", "metrics", "cautions"):
            assert details_read[name] == [dataclasses.asdict(x) for x in getattr(expected, name)]
        assert details_read["findings"] == [
            {
                **dataclasses.asdict(f),
                "evidence": list(f.evidence),
                "alternatives": list(f.alternatives),
            }
            for f in expected.findings
        ]
