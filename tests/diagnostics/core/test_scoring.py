"""The scoring table and how a measurement is graded against it."""

from __future__ import annotations

import math

import numpy as np
import pytest

from diagnostics.core import scoring as sc
from diagnostics.core.reasons import METRIC_NEEDS


def _grade(metric: str, measured, target, low=None, high=None):
    rule = sc.SCORING_TABLE[metric]
    m = np.atleast_1d(np.asarray(measured, dtype=float))
    t = np.broadcast_to(np.asarray(target, dtype=float), m.shape)
    lo = None if low is None else np.broadcast_to(np.asarray(low, dtype=float), m.shape)
    hi = None if high is None else np.broadcast_to(np.asarray(high, dtype=float), m.shape)
    band_low, band_high = sc.ok_band(rule, t, lo, hi)
    return sc.grade(rule, m, t, band_low, band_high)


def test_every_rule_names_its_source_and_costs_more_for_a_fault_than_a_watch():
    """The table is the one place for thresholds: each row carries a source, a unit-bearing
    label and points with fault >= watch >= 0; every metric the diagnosis scores has a row."""
    assert set(sc.SCORING_TABLE) == set(METRIC_NEEDS)
    for rule in sc.SCORING_TABLE.values():
        assert rule.source.strip(), rule.metric
        assert rule.label.strip(), rule.metric
        assert rule.fault_points >= rule.watch_points >= 0, rule.metric
        assert rule.fault_low >= 0, rule.metric
        assert rule.fault_high >= 0, rule.metric


@pytest.mark.parametrize(
    ("unbalance", "status", "points"),
    [(0.84, sc.OK, 0), (1.96, sc.WATCH, 10), (5.5, sc.FAULT, 25)],
)
def test_it_grades_voltage_unbalance_by_nema_mg1(unbalance, status, points):
    """NEMA MG-1 14.36 (docs/references.md §4): motors are designed for 1 % (480/476/472 V = 0.84 %
    is ok), derate between 1 and 5 % (460/467/450 V = 1.96 % is watched), and must not run
    above 5 % (fault)."""
    got_status, got_points, _ = _grade("voltage_unbalance", unbalance, 0.0)
    assert int(got_status[0]) == status
    assert float(got_points[0]) == points


def test_it_grades_running_amps_against_rla_as_a_fraction_of_it():
    """Running amps (synthetic 10 A RLA): at or below RLA ok; above RLA watch; above 125 % of
    RLA fault (the rule is relative, so the band scales with the nameplate)."""
    status, points, deviation = _grade("running_amps", [9.5, 10.0, 11.0, 13.0], 10.0)
    assert status.tolist() == [sc.OK, sc.OK, sc.WATCH, sc.FAULT]
    assert points.tolist() == [0, 0, 10, 20]
    assert deviation[2] == pytest.approx(1.0)


def test_it_marks_half_of_lra_at_standstill_as_a_fault():
    """A stopped compressor drawing current near its LRA is trying and failing to start
    (docs/references.md §4, common practice): from half the LRA it is a fault, below that ok."""
    status, points, _ = _grade("standstill_amps", [0.0, 20.0, 31.0, 58.0], 60.0)
    assert status.tolist() == [sc.OK, sc.OK, sc.FAULT, sc.FAULT]
    assert points.tolist() == [0, 0, 40, 40]


def test_it_grades_a_range_target_with_watch_then_fault_on_each_side():
    """Superheat with a synthetic 4.4-5.6 K range widened by an instrument margin of 1.11 K
    to 3.29-6.71 K: inside ok (1 K outside the bare range is still within instrument
    error); 1 K beyond the widened band watch; beyond the table's fault margins (2 K below,
    5.6 K above the widened band) fault; the deviation is signed and measured from the
    widened band."""
    m = 1.11
    measured = [5.0, 3.4, 4.4 - m - 1.0, 4.4 - m - 2.5, 5.6 + m + 1.0, 5.6 + m + 6.0]
    rule = sc.SCORING_TABLE["superheat"]
    values = np.asarray(measured)
    target, low, high = (np.full(values.shape, v) for v in (5.0, 4.4, 5.6))
    band_low, band_high = sc.ok_band(rule, target, low, high, np.full(values.shape, m))
    status, _, deviation = sc.grade(rule, values, target, band_low, band_high)
    assert status.tolist() == [sc.OK, sc.OK, sc.WATCH, sc.FAULT, sc.WATCH, sc.FAULT]
    assert deviation.tolist() == pytest.approx([0.0, 0.0, -1.0, -2.5, 1.0, 6.0])


def test_it_only_watches_a_side_that_never_faults():
    """A low condenser split is a symptom, not a fault in itself: however low, it is only
    watched, while a high split turns to fault (synthetic 14 K target)."""
    status, _, _ = _grade("condenser_split", [-5.0, 9.0, 17.5, 25.0], 14.0)
    assert status.tolist() == [sc.WATCH, sc.WATCH, sc.WATCH, sc.FAULT]


def test_it_does_not_score_a_missing_measurement_or_target():
    """NaN measured or NaN target: status not_scored, no points, no deviation."""
    status, points, deviation = _grade("running_amps", [np.nan, 9.0], [10.0, np.nan])
    assert status.tolist() == [sc.NOT_SCORED, sc.NOT_SCORED]
    assert points.tolist() == [0, 0]
    assert np.isnan(deviation).all()


def test_it_fails_a_capacitor_outside_its_marked_band_at_once():
    """docs/references.md §4: 74.5 uF against 70 uF +/-6 % (65.8-74.2) is outside the marked
    tolerance, which is a failed part (fault, no watch step)."""
    status, points, _ = _grade("run_capacitor", [74.5, 70.0], 70.0, 65.8, 74.2)
    assert status.tolist() == [sc.FAULT, sc.OK]
    assert points.tolist() == [15, 0]


def test_it_watches_a_head_near_the_cutout_and_faults_one_above_it():
    """Synthetic 2800 kPa cut-out: below 90 % ok, within the last 10 % watch, above fault."""
    status, _, _ = _grade("head_pressure", [2000.0, 2600.0, 2900.0], 2800.0)
    assert status.tolist() == [sc.OK, sc.WATCH, sc.FAULT]


def test_the_visit_score_is_100_minus_points_within_0_and_100():
    """The visit score subtracts the points lost from 100 and never leaves 0..100."""
    scores = sc.visit_score(np.array([0.0, 35.0, 250.0]))
    assert scores.tolist() == [100.0, 65.0, 0.0]


def test_an_open_side_of_a_band_is_infinite():
    """A side marked never scored (discharge temperature low) has an infinite edge, so no
    cold reading is ever marked."""
    rule = sc.SCORING_TABLE["discharge_line_temp"]
    low, high = sc.ok_band(rule, np.array([107.2]))
    assert math.isinf(low[0])
    assert low[0] < 0
    assert high[0] == pytest.approx(107.2)
