"""Calendars: fiscal years and quarters, frequency conversion, base spans (pipeline.periods)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from pipeline.errors import RealbasisError
from pipeline.model import ANNUAL, MONTHLY, QUARTERLY, Frequency, Series, fiscal_year
from pipeline.periods import (
    Span,
    aggregate_wide,
    fiscal_quarters,
    frequency_of_period,
    parse_span,
    relation,
    to_frequency,
)


def monthly(name, values, start="2024-01", kind="flow", status=None):
    idx = pd.period_range(start, periods=len(values), freq="M")
    st = None if status is None else pd.Series(status, index=idx, dtype=object)
    return Series(name, pd.Series(np.asarray(values, dtype=float), index=idx), MONTHLY,
                  kind=kind, status=st)


# --- fiscal calendars ------------------------------------------------------------------


def test_july_2024_to_june_2025_is_fy2025():
    # Fiscal years are labelled by the calendar year in which they end (common practice of
    # budget offices, e.g. a July-June year "2024-25" is FY2025; issue 2 point 3).
    fy = fiscal_year(7)
    months = pd.period_range("2024-07", "2025-06", freq="M")
    years = months.asfreq(fy.pandas_freq, how="end")
    assert set(fy.labels(years)) == {"FY2025"}
    assert fy.label(pd.Period("2024-06", "M").asfreq(fy.pandas_freq)) == "FY2024"
    span = parse_span("FY2025", 7)
    assert (span.first_month, span.last_month) == (
        pd.Period("2024-07", "M").ordinal, pd.Period("2025-06", "M").ordinal)
    assert span.describe() == "FY2025 (July 2024 to June 2025)"


def test_fiscal_quarters_start_with_the_fiscal_year():
    # FY2025Q1 of a July-June year is July-September 2024 (common practice).
    fq = fiscal_quarters(7)
    q = pd.Period("2024-08", "M").asfreq(fq.pandas_freq)
    assert fq.label(q) == "FY2025Q1"
    assert fq.label(pd.Period("2025-06", "M").asfreq(fq.pandas_freq)) == "FY2025Q4"
    # April-March years (UK government style): April-June 2024 is FY2025Q1.
    fa = fiscal_quarters(4)
    assert fa.label(pd.Period("2024-05", "M").asfreq(fa.pandas_freq)) == "FY2025Q1"
    span = parse_span("FY2025Q1", 7)
    assert span.periods_in(MONTHLY).strftime("%Y-%m").tolist() == ["2024-07", "2024-08", "2024-09"]


def test_frequency_of_period_reads_the_fiscal_anchor():
    assert frequency_of_period(pd.Period("2025", "Y-JUN")) == fiscal_year(7)
    assert frequency_of_period(pd.Period("2025Q1", "Q-MAR")) == fiscal_quarters(4)
    assert frequency_of_period(pd.Period("2025", "Y-DEC")) == ANNUAL
    assert frequency_of_period(pd.Period("2025-03", "M")) == MONTHLY


def test_relations_between_frequencies():
    assert relation(MONTHLY, fiscal_year(7)) == "coarser"
    assert relation(QUARTERLY, fiscal_year(4)) == "coarser"  # calendar quarters fit April years
    assert relation(QUARTERLY, fiscal_year(2)) is None  # ... but not February years
    assert relation(fiscal_year(7), MONTHLY) == "finer"
    assert relation(ANNUAL, Frequency("FY", 1)) == "same"
    assert relation(QUARTERLY, fiscal_quarters(4)) == "same"


# --- conversion to longer periods ------------------------------------------------------


def test_index_to_year_is_the_simple_average_of_its_months():
    # Period index of a multi-month period = simple average of the monthly levels
    # (DESIGN.md; ILO/IMF CPI Manual 2020 on annual averages, from memory).
    s = monthly("cpi", np.arange(1, 25), kind="index")
    out = to_frequency(s, ANNUAL)
    assert out.series.values.tolist() == [6.5, 18.5]
    assert out.series.frequency == ANNUAL
    assert not out.warnings


def test_flow_sums_stock_takes_last_value():
    # Flows aggregate by summing, stocks take the period's last value (IMF QNA Manual 2017, ch. 8).
    vals = np.arange(1.0, 13.0)
    flow = to_frequency(monthly("rev", vals), QUARTERLY).series.values
    stock = to_frequency(monthly("cash", vals, kind="stock"), QUARTERLY).series.values
    assert flow.tolist() == [6.0, 15.0, 24.0, 33.0]
    assert stock.tolist() == [3.0, 6.0, 9.0, 12.0]


def test_partial_periods_are_left_out_and_reported():
    # 2024-03 .. 2025-08 touches FY2024 (one month), FY2025 (complete) and FY2026 (2 months)
    s = monthly("rev", np.ones(18), start="2024-03")
    out = to_frequency(s, fiscal_year(7))
    assert fiscal_year(7).labels(out.series.index) == ["FY2025"]
    assert out.series.values.iloc[0] == 12.0
    # FY2024 (March-June 2024 only) and FY2026 (July-August 2025 only); one warning each
    assert [w.code for w in out.warnings] == ["PE210", "PE210"]
    assert sorted(w.where.period for w in out.warnings) == ["FY2024", "FY2026"]
    assert all(w.severity == "warning" for w in out.warnings)


def test_missing_month_inside_a_year_makes_it_partial():
    vals = np.ones(24)
    vals[5] = np.nan
    out = to_frequency(monthly("rev", vals), ANNUAL)
    assert ANNUAL.labels(out.series.index) == ["2025"]
    assert [w.where.period for w in out.warnings] == ["2024"]


def test_status_of_an_aggregate_is_the_worst_of_its_parts():
    status = ["final"] * 10 + ["preliminary", "projected"] + ["final"] * 12
    s = monthly("cpi", np.arange(1, 25), kind="index", status=status)
    out = to_frequency(s, QUARTERLY).series
    assert out.status.tolist() == ["final", "final", "final", "projected",
                                   "final", "final", "final", "final"]


def test_aggregate_wide_many_columns_at_once():
    idx = pd.period_range("2024-01", "2025-12", freq="M")
    arr = np.arange(48.0).reshape(24, 2)
    g = aggregate_wide(arr, idx, MONTHLY, ANNUAL, "sum")
    assert g.values.tolist() == [arr[:12].sum(axis=0).tolist(), arr[12:].sum(axis=0).tolist()]


def test_calendar_quarters_do_not_fit_a_february_year():
    q = Series("x", pd.Series([1.0] * 8, index=pd.period_range("2024Q1", periods=8, freq="Q")),
               QUARTERLY, kind="index")
    with pytest.raises(RealbasisError) as err:
        to_frequency(q, fiscal_year(2))
    assert err.value.code == "PE201"


# --- to shorter periods: refused unless interpolation, which is flagged -----------------


def test_more_frequent_target_is_refused_with_a_code():
    q = Series("cpi", pd.Series([100.0, 101, 102, 103],
                                index=pd.period_range("2024Q1", periods=4, freq="Q")),
               QUARTERLY, kind="index")
    with pytest.raises(RealbasisError) as err:
        to_frequency(q, MONTHLY)
    assert err.value.code == "PE204"
    assert "interpolation" in err.value.problems[0].fix


def test_interpolation_is_flagged_on_every_value():
    q = Series("cpi", pd.Series([100.0, 103, 106, 109],
                                index=pd.period_range("2024Q1", periods=4, freq="Q")),
               QUARTERLY, kind="index",
               status=pd.Series(["final", "final", "final", "preliminary"],
                                index=pd.period_range("2024Q1", periods=4, freq="Q")))
    out = to_frequency(q, MONTHLY, interpolate="linear")
    v = out.series.values
    assert len(v) == 12 and out.interpolated is not None and bool(out.interpolated.all())
    # mid-quarter months carry the quarter's value; straight line between them
    assert v["2024-02"] == 100.0 and v["2024-05"] == 103.0 and v["2024-03"] == pytest.approx(101.0)
    assert v["2024-01"] == 100.0  # held flat before the first midpoint
    assert [w.code for w in out.warnings] == ["PE208"]
    # months read (partly) from the preliminary fourth quarter are preliminary: August sits
    # on the third quarter's midpoint, September lies between the Q3 and Q4 midpoints
    assert out.series.status["2024-08"] == "final"
    assert out.series.status["2024-09"] == "preliminary"
    assert (out.series.status["2024-01":"2024-08"] == "final").all()
    # the default (Denton) keeps each quarter's average instead (IMF QNA Manual 2017,
    # ch. 6) and is flagged alike; July-September sit next to the preliminary Q4
    den = to_frequency(q, MONTHLY, interpolate=True)
    dv = den.series.values
    assert dv.groupby(dv.index.quarter).mean().to_numpy() == pytest.approx([100, 103, 106, 109])
    assert bool(den.interpolated.all()) and [w.code for w in den.warnings] == ["PE208"]
    assert (den.series.status["2024-01":"2024-06"] == "final").all()
    assert (den.series.status["2024-07":"2024-12"] == "preliminary").all()


def test_money_series_are_never_interpolated():
    a = Series("rev", pd.Series([1.0, 2.0], index=pd.period_range("2024", periods=2, freq="Y")),
               ANNUAL, kind="flow")
    with pytest.raises(RealbasisError) as err:
        to_frequency(a, MONTHLY, interpolate=True)
    assert err.value.code == "PE206"


# --- spans -----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "fy", "label", "months"),
    [
        ("FY2025", 7, "FY2025", 12),
        ("2024Q1", None, "2024Q1", 3),
        ("2024-01", None, "2024-01", 1),
        ("2024", None, "2024", 12),
        ("FY2025Q1", 7, "FY2025Q1", 3),
        ("2024-01..2024-12", None, "2024-01..2024-12", 12),
        ("2023Q3..2024Q2", None, "2023Q3..2024Q2", 12),
    ],
)
def test_parse_span_accepts_intake_labels_and_ranges(text, fy, label, months):
    span = parse_span(text, fy)
    assert span.label == label
    assert span.n_months == months


def test_parse_span_errors_are_coded():
    with pytest.raises(RealbasisError) as err:
        parse_span("2024-12..2024-01")
    assert err.value.code == "PE202"
    with pytest.raises(RealbasisError) as err:
        parse_span("2024-01..2024Q4")
    assert err.value.code == "PE202"
    with pytest.raises(RealbasisError) as err:
        parse_span("")
    assert err.value.code == "PE202"
    with pytest.raises(RealbasisError):
        parse_span("FY2025")  # fiscal start month is never assumed (H1's labels rule)


def test_span_in_the_index_frequency():
    fy = Span.of(pd.Period("2025", "Y-JUN"), fiscal_year(7))
    assert len(fy.periods_in(MONTHLY)) == 12
    assert QUARTERLY.labels(fy.periods_in(QUARTERLY)) == ["2024Q3", "2024Q4", "2025Q1", "2025Q2"]
    with pytest.raises(RealbasisError) as err:
        parse_span("2024-03").periods_in(ANNUAL)
    assert err.value.code == "PE203"
