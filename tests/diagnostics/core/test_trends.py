"""Metric series, the robust slope and the head-pressure drift projections."""

from __future__ import annotations

from datetime import date, timedelta

import numpy as np
import pytest
import scipy.stats

from diagnostics.core.head_pressure import highest_condensing_c
from diagnostics.core.split_drift import (
    DEFAULT_DRIFT_RULES,
    assess_split_drift,
    assess_split_drift_arrays,
    assess_split_drift_many,
)
from diagnostics.core.split_drift_types import (
    DriftStatus,
    HeadPressureLimit,
    SplitColumns,
    SplitDriftInput,
    SplitPoint,
    split_series,
)
from diagnostics.core.trends import MetricPoint, build_series, theil_sen

TODAY = date(2026, 6, 30)
DESIGN_SPLIT_K = 14.0


def monthly_points(values: np.ndarray, *, every_days: int = 30) -> tuple[SplitPoint, ...]:
    """As-found splits, the last one today, ``every_days`` apart (synthetic)."""
    n = len(values)
    return tuple(
        SplitPoint(TODAY - timedelta(days=every_days * (n - 1 - k)), float(v), 25.0)
        for k, v in enumerate(values)
    )


def line(n: int, slope_k_per_day: float, split_today_k: float, every_days: int = 30) -> np.ndarray:
    x = -every_days * np.arange(n - 1, -1, -1, dtype=float)
    return split_today_k + slope_k_per_day * x


def test_theil_sen_matches_scipy_including_ties() -> None:
    """Slope, intercept and Sen's 90 % interval equal scipy.stats.theilslopes (an independent
    implementation of Sen, JASA 63 (1968) 1379) on random series with ties in x and y;
    tolerance 1e-9 relative."""
    rng = np.random.default_rng(7)
    for k in range(60):
        n = int(rng.integers(2, 26))
        x = np.sort(rng.choice(800, n, replace=False)).astype(float)
        if k % 3 == 0 and n > 2:
            x[1] = x[0]
        y = np.round(rng.normal(0.0, 1.0, n) + 0.004 * x, 1)
        ref = scipy.stats.theilslopes(y, x, alpha=0.90)
        fit = theil_sen(x, y, confidence=0.90)
        got = (fit.slope[0], fit.intercept[0], fit.low_slope[0], fit.high_slope[0])
        np.testing.assert_allclose(got, tuple(ref), rtol=1e-9, equal_nan=True)


def test_padded_rows_fit_like_separate_rows() -> None:
    """Rows of different lengths padded with NaN give the same fit as each row alone."""
    rng = np.random.default_rng(3)
    rows = [rng.normal(0, 1, n) + 0.01 * np.arange(n) * 30 for n in (5, 12, 24)]
    x = np.full((3, 24), np.nan)
    y = np.full((3, 24), np.nan)
    for r, vals in enumerate(rows):
        x[r, : len(vals)] = np.arange(len(vals)) * 30.0
        y[r, : len(vals)] = vals
    batch = theil_sen(x, y)
    for r, vals in enumerate(rows):
        alone = theil_sen(np.arange(len(vals)) * 30.0, vals)
        assert batch.slope[r] == pytest.approx(alone.slope[0])
        assert batch.low_slope[r] == pytest.approx(alone.low_slope[0])
        assert batch.trend_confidence[r] == pytest.approx(alone.trend_confidence[0])
        assert batch.points[r] == len(vals)


def test_trend_confidence_is_the_one_sided_kendall_test() -> None:
    """The confidence equals 1 - p of scipy.stats.kendalltau (asymptotic, alternative
    'greater'), i.e. the Mann-Kendall test (Kendall, Rank Correlation Methods, 1975), on
    tie-free data; tolerance 1e-9."""
    rng = np.random.default_rng(11)
    for _ in range(20):
        n = int(rng.integers(4, 25))
        x = np.arange(n, dtype=float) * 30
        y = rng.normal(0, 1, n) + rng.normal(0, 0.01) * x
        ref = scipy.stats.kendalltau(x, y, method="asymptotic", alternative="greater")
        assert theil_sen(x, y).trend_confidence[0] == pytest.approx(1 - ref.pvalue, abs=1e-9)


def test_it_recovers_a_known_slope_and_the_crossing_date() -> None:
    """Synthetic: 24 monthly splits rising 0.015 K/day (5.48 K/year) to 17.6 K today, noise
    0.05 K (seeded). The slope is recovered within 0.3 K/year and the split limit
    (14 + 5.6 = 19.6 K) is projected within 7 days of the true crossing, 133 days away."""
    rng = np.random.default_rng(2024)
    values = line(24, 0.015, 17.6) + rng.normal(0.0, 0.05, 24)
    drift = assess_split_drift(SplitDriftInput(monthly_points(values), DESIGN_SPLIT_K), TODAY)
    assert drift.status is DriftStatus.DRIFT
    assert drift.slope_k_per_year == pytest.approx(0.015 * 365.25, abs=0.3)
    true_crossing = TODAY + timedelta(days=round((19.6 - 17.6) / 0.015))
    assert drift.limit_crossed_on is not None
    assert abs((drift.limit_crossed_on - true_crossing).days) <= 7
    assert drift.points_used == 24
    assert drift.span_days == 690


def test_crossing_dates_land_within_a_week_across_many_noisy_series() -> None:
    """Synthetic: 400 series as above (noise 0.05 K, seeded) through the array entry point:
    at least 95 % of the projected crossings fall within 7 days of the true one, and all are
    flagged."""
    rng = np.random.default_rng(99)
    x = np.tile(-30.0 * np.arange(23, -1, -1), (400, 1))
    y = 17.6 + 0.015 * x + rng.normal(0.0, 0.05, x.shape)
    arrays = assess_split_drift_arrays(x, y, np.full(400, DESIGN_SPLIT_K))
    error_days = np.abs(arrays.limit_offset_days - (19.6 - 17.6) / 0.015)
    assert np.mean(error_days <= 7.0) >= 0.95
    assert arrays.flag.all()


def test_the_slope_interval_covers_the_true_slope_about_as_often_as_stated() -> None:
    """Sen's (1968) 90 % interval: over 400 synthetic series (24 monthly points, slope
    0.015 K/day, 0.3 K noise, seeded) it holds the true slope in 85-95 % of them."""
    rng = np.random.default_rng(12)
    x = np.tile(-30.0 * np.arange(23, -1, -1), (400, 1))
    y = 17.6 + 0.015 * x + rng.normal(0.0, 0.3, x.shape)
    fit = theil_sen(x, y, confidence=0.90)
    covered = np.mean((fit.low_slope <= 0.015) & (fit.high_slope >= 0.015))
    assert 0.85 <= covered <= 0.95


@pytest.mark.parametrize("seed", range(10))
def test_a_noisy_flat_series_raises_no_drift_flag(seed: int) -> None:
    """Synthetic: 24 monthly splits at 15 K with 1 K of noise (ten seeds): enough history,
    no drift."""
    rng = np.random.default_rng(seed)
    values = 15.0 + rng.normal(0.0, 1.0, 24)
    drift = assess_split_drift(SplitDriftInput(monthly_points(values), DESIGN_SPLIT_K), TODAY)
    assert drift.status is DriftStatus.NO_DRIFT
    assert not drift.flag


def test_one_outlier_does_not_fool_the_robust_slope() -> None:
    """Synthetic: 12 monthly splits rising 0.01 K/day, the last one typed 12 K too high. The
    Theil-Sen slope stays within 5 % of the truth where least squares is off by over 30 %."""
    values = line(12, 0.01, 15.0)
    values[-1] += 12.0
    x = -30.0 * np.arange(11, -1, -1)
    robust = theil_sen(x, values).slope[0]
    least_squares = np.polyfit(x, values, 1)[0]
    assert robust == pytest.approx(0.01, rel=0.05)
    assert abs(least_squares - 0.01) / 0.01 > 0.30


def test_a_flat_series_with_one_outlier_is_not_drift() -> None:
    """Synthetic: 12 monthly splits at 15 K (0.2 K noise) with the latest typed 12 K too high:
    the outlier alone does not make a drift."""
    rng = np.random.default_rng(5)
    values = 15.0 + rng.normal(0.0, 0.2, 12)
    values[-1] += 12.0
    drift = assess_split_drift(SplitDriftInput(monthly_points(values), DESIGN_SPLIT_K), TODAY)
    assert drift.status is DriftStatus.NO_DRIFT
    assert abs(drift.slope_k_per_year) < 1.0


@pytest.mark.parametrize(
    ("count", "every_days"),
    [(0, 30), (1, 30), (4, 60), (8, 10)],
)
def test_it_says_so_when_there_is_too_little_history(count: int, every_days: int) -> None:
    """Fewer than 5 points, or a span under 90 days (8 points 10 days apart), is reported as
    too little history, with the minimum named, even for a steep synthetic rise."""
    values = line(count, 0.1, 16.0, every_days)
    drift = assess_split_drift(
        SplitDriftInput(monthly_points(values, every_days=every_days), DESIGN_SPLIT_K), TODAY
    )
    assert drift.status is DriftStatus.INSUFFICIENT_HISTORY
    assert not drift.flag
    assert "5 points over 90 days" in drift.reason
    assert drift.slope_k_per_year is None


def test_a_slow_rise_far_from_the_limit_is_not_drift() -> None:
    """Synthetic: a clean rise of 2 K/year from 14.5 K reaches the 19.6 K limit only after
    about 2.5 years, beyond the 180-day horizon: rising but not flagged."""
    values = line(24, 2.0 / 365.25, 14.5)
    drift = assess_split_drift(SplitDriftInput(monthly_points(values), DESIGN_SPLIT_K), TODAY)
    assert drift.status is DriftStatus.NO_DRIFT
    assert drift.limit_crossed_on is not None
    assert drift.limit_crossed_on > TODAY + timedelta(days=DEFAULT_DRIFT_RULES.horizon_days)


def test_as_left_and_future_points_are_kept_out_of_the_trend() -> None:
    """As-left readings (what the technician left) and points after today do not enter the
    fit; the series keeps as-left apart for display."""
    found = monthly_points(line(6, 0.0, 15.0))
    extra = (
        SplitPoint(TODAY - timedelta(days=10), 30.0, 25.0, as_left=True),
        SplitPoint(TODAY + timedelta(days=10), 30.0, 25.0),
    )
    drift = assess_split_drift(SplitDriftInput(found + extra, DESIGN_SPLIT_K), TODAY)
    assert drift.points_used == 6
    assert drift.split_now_k == pytest.approx(15.0)
    series = split_series(found + extra)
    assert len(series.as_left) == 1
    assert len(series.as_found) == 7


def test_columns_mean_the_same_as_points() -> None:
    """A history given as arrays (the fleet form) is judged exactly like the same points,
    as-left filtering included."""
    rng = np.random.default_rng(4)
    points = (
        *monthly_points(line(18, 0.02, 18.0) + rng.normal(0, 0.2, 18)),
        SplitPoint(TODAY - timedelta(days=3), 40.0, 25.0, as_left=True),
        SplitPoint(TODAY - timedelta(days=200), 28.0, 1.0),
    )
    columns = SplitColumns.of(
        [p.taken_on for p in points],
        [p.split_k for p in points],
        [p.entering_air_c for p in points],
        [p.as_left for p in points],
    )
    as_points = assess_split_drift(SplitDriftInput(points, DESIGN_SPLIT_K), TODAY)
    as_columns = assess_split_drift(SplitDriftInput(columns, DESIGN_SPLIT_K), TODAY)
    assert as_columns == as_points
    assert as_points.points_used == 19


def test_build_series_sorts_and_drops_missing_values() -> None:
    """A series comes back in date order without NaN values, as-left apart."""
    pts = [
        MetricPoint(date(2026, 3, 1), 2.0),
        MetricPoint(date(2026, 1, 1), 1.0),
        MetricPoint(date(2026, 2, 1), float("nan")),
        MetricPoint(date(2026, 1, 1), 1.5, as_left=True),
    ]
    series = build_series("superheat", "K", pts)
    assert series.as_found == ((date(2026, 1, 1), 1.0), (date(2026, 3, 1), 2.0))
    assert series.as_left == ((date(2026, 1, 1), 1.5),)
    days, values = series.as_found_arrays(date(2026, 1, 1))
    np.testing.assert_array_equal(days, [0.0, 59.0])
    np.testing.assert_array_equal(values, [1.0, 2.0])


def test_many_units_at_once_match_one_at_a_time() -> None:
    """The vectorised fleet path gives the same judgement as each unit alone."""
    rng = np.random.default_rng(9)
    cases = ((3, 0.02, 16.0), (24, 0.0, 16.0), (12, 0.02, 18.0), (24, 0.03, 18.0), (7, 0.01, 18.0))
    inputs = [
        SplitDriftInput(monthly_points(line(n, s, today) + rng.normal(0, 0.3, n)), DESIGN_SPLIT_K)
        for n, s, today in cases
    ]
    many = assess_split_drift_many(inputs, TODAY)
    assert many == [assess_split_drift(i, TODAY) for i in inputs]
    assert [d.status for d in many[:4]] == [
        DriftStatus.INSUFFICIENT_HISTORY,
        DriftStatus.NO_DRIFT,
        DriftStatus.DRIFT,
        DriftStatus.DRIFT,
    ]


def test_a_condenser_left_dirty_is_flagged_without_a_rising_trend() -> None:
    """Issue seen in the field: a condenser found rejecting too little heat at seven summer
    visits had no open flag at the end of the year: the split sat high but did not rise.
    Three of the last four judged splits above the ok band (design + 3 K, the scoring
    table's edge; ours), the latest included, keep the flag open; one high reading among
    normal ones does not, and a clean coil's normal split at the last visit closes it."""
    high = SplitDriftInput(monthly_points(np.array([14.5, 18.5, 18.6, 18.4, 18.7])), 14.0)
    drift = assess_split_drift(high, TODAY)
    assert drift.flag
    assert drift.persistently_high
    one_off = SplitDriftInput(monthly_points(np.array([14.5, 14.2, 18.6, 14.4, 14.1])), 14.0)
    assert not assess_split_drift(one_off, TODAY).flag
    cleaned = SplitDriftInput(monthly_points(np.array([18.5, 18.6, 18.4, 18.7, 14.2])), 14.0)
    assert not assess_split_drift(cleaned, TODAY).flag


def test_array_entry_point_flags_like_the_dataclass_path() -> None:
    """``assess_split_drift_arrays`` takes plain arrays (days before today, splits)."""
    x = -30.0 * np.arange(11, -1, -1)
    y = np.vstack([15.0 + 0.03 * x + 2.0, np.full(12, 15.0)])
    arrays = assess_split_drift_arrays(x[None, :].repeat(2, 0), y, [14.0, 14.0])
    assert arrays.flag.tolist() == [True, False]
    assert arrays.enough_history.tolist() == [True, True]


# --- through the property engine -----------------------------------------------------------------

R134A_300K_KPA_ABS = 702.82  # Tillner-Roth & Baehr 1994, Table 8
R404A_300K_BUBBLE_KPA_ABS = 1316.9  # Lemmon 2003, Table V
R404A_300K_DEW_KPA_ABS = 1303.4  # Lemmon 2003, Table V


def flat_unit(split_k: float, head: HeadPressureLimit) -> SplitDriftInput:
    return SplitDriftInput(monthly_points(np.full(6, split_k)), DESIGN_SPLIT_K, head=head)


@pytest.mark.parametrize(
    ("refrigerant", "point", "p_abs", "elevation_m", "p_atm"),
    [
        ("R-134a", "bubble", R134A_300K_KPA_ABS, 0.0, 101.325),
        ("R-134a", "bubble", R134A_300K_KPA_ABS, 1000.0, 89.875),
        ("R-404A", "bubble", R404A_300K_BUBBLE_KPA_ABS, 0.0, 101.325),
        ("R-404A", "dew", R404A_300K_DEW_KPA_ABS, 0.0, 101.325),
    ],
)
def test_design_day_head_pressure_matches_published_saturation(
    refrigerant: str, point: str, p_abs: float, elevation_m: float, p_atm: float
) -> None:
    """Design day 20 C plus a flat 6.85 K split condenses at 26.85 C (300 K). The head is the
    published saturation pressure at 300 K minus the standard atmosphere at the site.

    Sources: R-134a 702.82 kPa (Tillner-Roth & Baehr, J. Phys. Chem. Ref. Data 23 (1994) 657,
    Table 8); R-404A bubble 1.3169 MPa and dew 1.3034 MPa (Lemmon, Int. J. Thermophys. 24
    (2003) 991, Table V); atmosphere 101.325 and 89.875 kPa at 0 and 1000 m (ASHRAE
    Fundamentals 2017 ch. 1 Table 1). Tolerance 0.05 % of the absolute pressure.
    """
    head = HeadPressureLimit(refrigerant, 20.0, 3000.0, elevation_m, point)  # type: ignore[arg-type]
    drift = assess_split_drift(flat_unit(6.85, head), TODAY)
    assert drift.design_day_head_now_kpa_gauge == pytest.approx(p_abs - p_atm, abs=5e-4 * p_abs)
    assert drift.design_day_head_at_horizon_kpa_gauge == pytest.approx(
        p_abs - p_atm, abs=5e-4 * p_abs
    )


def test_the_mid_point_convention_lies_between_dew_and_bubble() -> None:
    """On R-404A at 300 K the mid-point head (the default, as ``targets`` measures the split)
    lies between the published dew (1.3034 MPa) and bubble (1.3169 MPa) pressures (Lemmon,
    Int. J. Thermophys. 24 (2003) 991, Table V), each less the 101.325 kPa atmosphere."""
    head = HeadPressureLimit("R-404A", 20.0, 3000.0)
    assert head.condensing_point == "mid_point"
    drift = assess_split_drift(flat_unit(6.85, head), TODAY)
    gauge = drift.design_day_head_now_kpa_gauge
    assert R404A_300K_DEW_KPA_ABS - 101.325 < gauge < R404A_300K_BUBBLE_KPA_ABS - 101.325


def test_highest_condensing_temperature_inverts_the_cutout() -> None:
    """A cut-out at R-134a's published 300 K pressure (702.82 kPa abs, Tillner-Roth & Baehr
    1994) is reached condensing at 26.85 C; tolerance 0.02 K."""
    t = highest_condensing_c("R-134a", R134A_300K_KPA_ABS - 101.325, 0.0, "bubble")
    assert t == pytest.approx(26.85, abs=0.02)


def test_it_projects_the_day_a_design_day_reaches_the_cutout() -> None:
    """Synthetic R-134a unit: split rising 0.01 K/day to 5.0 K today, design day 20 C, cut-out
    at the 300 K saturation pressure (702.82 kPa abs, Tillner-Roth & Baehr 1994). The design
    day trips it once the split reaches 6.85 K: 185 days from today, within 2 days."""
    head = HeadPressureLimit("R-134a", 20.0, R134A_300K_KPA_ABS - 101.325)
    values = line(12, 0.01, 5.0)
    drift = assess_split_drift(
        SplitDriftInput(monthly_points(values), design_split_k=3.0, head=head), TODAY
    )
    assert drift.cutout_reached_on is not None
    assert abs((drift.cutout_reached_on - (TODAY + timedelta(days=185))).days) <= 2
    assert drift.design_day_head_now_kpa_gauge < head.high_pressure_cutout_kpa_gauge
    assert drift.design_day_head_at_horizon_kpa_gauge < head.high_pressure_cutout_kpa_gauge


def test_a_cutout_reached_within_the_horizon_flags_the_drift() -> None:
    """Synthetic: the split limit is far off (design 3 K + 5.6 K), but the design-day head
    reaches the cut-out within the horizon: flagged, the head at the horizon over the cut-out."""
    head = HeadPressureLimit("R-134a", 20.0, R134A_300K_KPA_ABS - 101.325)
    values = line(12, 0.02, 5.0)
    drift = assess_split_drift(
        SplitDriftInput(monthly_points(values), design_split_k=3.0, head=head), TODAY
    )
    assert drift.flag
    assert drift.limit_crossed_on is not None
    assert drift.cutout_reached_on is not None
    assert drift.cutout_reached_on < drift.limit_crossed_on
    assert drift.design_day_head_at_horizon_kpa_gauge > head.high_pressure_cutout_kpa_gauge


def test_a_nearly_flat_line_above_its_limit_dates_from_the_first_point() -> None:
    """A split sitting above its limit on an almost flat line crossed the limit ages before
    any reading (found at a year's end in the field, as a date out of any calendar): the
    crossing is dated at the first point, never computed past the calendar."""
    values = 20.0 + 1e-9 * np.arange(12)
    drift = assess_split_drift(SplitDriftInput(monthly_points(values), DESIGN_SPLIT_K), TODAY)
    assert drift.limit_crossed_on == TODAY - timedelta(days=30 * 11)
