"""Period labels (pipeline.labels)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeline.commands._remedies import CLI
from pipeline.errors import RealbasisError, fix_text
from pipeline.labels import parse_label, parse_label_column
from pipeline.model import Frequency


@pytest.mark.parametrize(
    ("text", "period", "freq"),
    [
        # ISO 8601 calendar dates and year-months (ISO 8601-1:2019, 5.2.2 / 5.2.1)
        ("2024-01-31", pd.Period("2024-01", "M"), Frequency("M")),
        ("2024-01-01T00:00:00", pd.Period("2024-01", "M"), Frequency("M")),
        ("2024-03-31 00:00:00", pd.Period("2024-03", "M"), Frequency("M")),
        ("2024-01", pd.Period("2024-01", "M"), Frequency("M")),
        ("2024/3", pd.Period("2024-03", "M"), Frequency("M")),
        # 2024M01: month notation of many statistical exports (common practice)
        ("2024M01", pd.Period("2024-01", "M"), Frequency("M")),
        # SDMX reporting periods 2024-M01, 2024-A1 (SDMX 2.1 Technical Notes, time
        # period formats; from memory)
        ("2024-M01", pd.Period("2024-01", "M"), Frequency("M")),
        ("2024-A1", pd.Period("2024", "Y-DEC"), Frequency("A")),
        ("2024M1", pd.Period("2024-01", "M"), Frequency("M")),
        ("Jan 2024", pd.Period("2024-01", "M"), Frequency("M")),
        ("January 2024", pd.Period("2024-01", "M"), Frequency("M")),
        ("sept-2024", pd.Period("2024-09", "M"), Frequency("M")),
        ("2024 Dec", pd.Period("2024-12", "M"), Frequency("M")),
        ("2024Q1", pd.Period("2024Q1", "Q-DEC"), Frequency("Q")),
        ("2024-Q2", pd.Period("2024Q2", "Q-DEC"), Frequency("Q")),
        ("Q3 2024", pd.Period("2024Q3", "Q-DEC"), Frequency("Q")),
        ("2024", pd.Period("2024", "Y-DEC"), Frequency("A")),
        (" 2024 ", pd.Period("2024", "Y-DEC"), Frequency("A")),
    ],
)
def test_calendar_labels(text, period, freq):
    p, f = parse_label(text)
    assert p == period
    assert f == freq
    # canonical labels round-trip
    assert parse_label(f.label(p)) == (p, f)


def test_fiscal_year_labelled_by_end_year():
    # A fiscal year is named after the calendar year in which it ends: the US federal
    # FY2025 runs 1 Oct 2024 - 30 Sep 2025 (31 U.S.C. 1102; OMB Circular A-11).
    p, f = parse_label("FY2025", fy_start=10)
    assert f == Frequency("FY", 10)
    assert p.start_time == pd.Timestamp("2024-10-01")
    assert p.end_time.normalize() == pd.Timestamp("2025-09-30")
    assert f.label(p) == "FY2025"


def test_fiscal_quarter_and_span_labels():
    # UK central government year 2024-25 runs 1 April 2024 - 31 March 2025 (HM Treasury,
    # "Managing Public Money", the financial year); labelled FY2025 by its end year.
    p, f = parse_label("2024-25", fy_start=4)
    assert f == Frequency("FY", 4)
    assert p.start_time == pd.Timestamp("2024-04-01")
    assert parse_label("2024/25", fy_start=4) == (p, f)
    assert parse_label("2024-2025", fy_start=4) == (p, f)
    # FY2025Q1 with a July start is July-September 2024 (common practice)
    q, fq = parse_label("FY2025Q1", fy_start=7)
    assert fq == Frequency("Q", 7)
    assert q.start_time == pd.Timestamp("2024-07-01")
    assert fq.label(q) == "FY2025Q1"
    assert parse_label("Q1 FY2025", fy_start=7) == (q, fq)
    # FY labels with a January start are calendar years labelled FY
    p1, f1 = parse_label("FY2025", fy_start=1)
    assert p1.start_time == pd.Timestamp("2025-01-01") and f1 == Frequency("FY", 1)


@pytest.mark.parametrize("text", ["FY2025", "FY2025Q1", "2024-25", "2024/25"])
def test_fiscal_labels_need_a_start_month(text):
    with pytest.raises(RealbasisError) as e:
        parse_label(text)
    assert e.value.code == "PE102"
    # neutral in the engine; the command line renders the remedy as its option
    assert e.value.problems[0].remedy == "fiscal_start"
    assert "--fiscal-start" in fix_text(e.value.problems[0], CLI)


def test_span_with_january_start_is_refused():
    with pytest.raises(RealbasisError) as e:
        parse_label("2024-25", fy_start=1)
    assert e.value.code == "PE105"


@pytest.mark.parametrize("bad", [0, 13, 7.5, "7"])
def test_fiscal_start_out_of_range(bad):
    with pytest.raises(RealbasisError) as e:
        parse_label("2024", fy_start=bad)
    assert e.value.code == "PE104"


@pytest.mark.parametrize("text", ["", "  ", "garbage", "2024-13", "2024-02-30", "Q5 2024",
                                  "2024-26", "13/2024", "FY", "0999", "2024-2026"])
def test_garbage_is_coded(text):
    with pytest.raises(RealbasisError) as e:
        parse_label(text)
    assert e.value.code == "PE101"


def test_leap_day_is_a_date():
    assert parse_label("2024-02-29")[0] == pd.Period("2024-02", "M")
    with pytest.raises(RealbasisError):
        parse_label("2023-02-29")


def test_column_consecutive_spans_are_fiscal_years():
    # 2010-11, 2011-12: alone each could be a month; consecutive years in a column mean
    # fiscal years (common practice in public budget tables)
    col = parse_label_column(["2010-11", "2011-12", "2012-13"], fy_start=7)
    assert col.frequency == Frequency("FY", 7)
    assert list(col.index.year) == [2011, 2012, 2013]
    col2 = parse_label_column(["2010-11", "2011-12"], fy_start=4)
    assert col2.frequency == Frequency("FY", 4)
    # with ordinary months around them, 2011-12 is December 2011
    col3 = parse_label_column(["2011-11", "2011-12", "2012-01"])
    assert col3.frequency == Frequency("M")
    assert col3.index[1] == pd.Period("2011-12", "M")
    # and a lone 2011-12 is a month
    assert parse_label_column(["2011-12"]).frequency == Frequency("M")
    # spans without a start month ask for one
    with pytest.raises(RealbasisError) as e:
        parse_label_column(["2010-11", "2011-12"], file="f.csv", column="Year")
    assert e.value.code == "PE102"
    assert e.value.problems[0].where.column == "Year"


def test_column_of_dates_finds_quarters_and_years():
    q = parse_label_column(["2024-01-01", "2024-04-01", "2024-10-01"])
    assert q.frequency == Frequency("Q")
    assert q.index[2] == pd.Period("2024Q4", "Q-DEC")
    q_end = parse_label_column(["2024-03-31", "2024-06-30"])
    assert q_end.frequency == Frequency("Q")
    a = parse_label_column(["2023-12-31", "2024-12-31"])
    assert a.frequency == Frequency("A")
    fy = parse_label_column(["2024-06-30", "2025-06-30"], fy_start=7)
    assert fy.frequency == Frequency("FY", 7)
    assert fy.index[0] == pd.Period("2024", "Y-JUN")  # July 2023 - June 2024 is FY2024
    m = parse_label_column(["2024-01-31", "2024-02-29", "2024-03-31"])
    assert m.frequency == Frequency("M")


def test_column_collects_bad_positions():
    col = parse_label_column(["2024-01", "oops", None, "2024-03"])
    assert col.frequency == Frequency("M")
    assert col.bad == ((1, "oops"), (2, ""))
    assert col.index[0] == pd.Period("2024-01", "M")
    assert pd.isna(col.index[1]) and pd.isna(col.index[2])
    assert col.index[3] == pd.Period("2024-03", "M")


def test_column_mixed_frequencies_located():
    with pytest.raises(RealbasisError) as e:
        parse_label_column(["2024-01", "2024-02", "2024"], file="x.csv", column="period",
                           rows=[2, 3, 4])
    p = e.value.problems[0]
    assert p.code == "PE103"
    assert (p.where.file, p.where.column, p.where.row) == ("x.csv", "period", 4)


def test_large_column_parses_over_uniques():
    labels = pd.period_range("1900-01", periods=2000, freq="M").strftime("%Y-%m")
    values = np.tile(np.asarray(labels, dtype=object), 500)  # 1,000,000 values
    col = parse_label_column(values)
    assert len(col.index) == 1_000_000
    assert col.index[1999] == pd.Period("2066-08", "M")
    assert col.index[2000] == pd.Period("1900-01", "M")


@settings(max_examples=150, deadline=None)
@given(st.text(max_size=20))
def test_any_text_is_a_period_or_coded_error(text):
    try:
        p, f = parse_label(text, fy_start=7)
    except RealbasisError as e:
        assert e.code.startswith("PE")
    else:
        assert isinstance(p, pd.Period) and isinstance(f, Frequency)


@settings(max_examples=100, deadline=None)
@given(st.integers(1800, 2200), st.integers(1, 12), st.sampled_from(["M", "Q", "A", "FY", "FQ"]),
       st.integers(1, 12))
def test_canonical_labels_round_trip(year, month, code, fy_start):
    freq = {"M": Frequency("M"), "Q": Frequency("Q"), "A": Frequency("A"),
            "FY": Frequency("FY", fy_start), "FQ": Frequency("Q", fy_start)}[code]
    period = pd.Period(f"{year}-{month:02d}", "M").asfreq(freq.pandas_freq)
    assert parse_label(freq.label(period), fy_start=fy_start) == (period, freq)


def test_slashed_dates_resolved_by_the_column():
    # day above 12 decides day-first (common practice in UK/European exports) ...
    assert parse_label("31/01/2024")[0] == pd.Period("2024-01", "M")
    # ... second number above 12 decides month-first (US spreadsheets)
    assert parse_label("1/31/2024")[0] == pd.Period("2024-01", "M")
    assert parse_label("2024/01/31")[0] == pd.Period("2024-01", "M")
    # first-of-month columns decide it: 1/3, 1/4 are 1 March, 1 April
    assert list(parse_label_column(["1/3/2024", "1/4/2024"]).index.month) == [3, 4]
    assert list(parse_label_column(["3/1/2024", "4/1/2024"]).index.month) == [3, 4]
    with pytest.raises(RealbasisError) as e:
        parse_label_column(["3/4/2024", "4/5/2024"], file="d.csv", column="date")
    assert e.value.code == "PE106" and e.value.problems[0].where.column == "date"
    with pytest.raises(RealbasisError) as e:
        parse_label("3/4/2024")
    assert e.value.code == "PE106"
    with pytest.raises(RealbasisError) as e:
        parse_label("30/2/2024")
    assert e.value.code == "PE101"


def test_many_distinct_iso_dates_take_the_fast_path_and_stay_strict():
    days = pd.date_range("1990-01-01", periods=5000, freq="D").strftime("%Y-%m-%d").tolist()
    col = parse_label_column([*days, "2023-02-29", "1999-13-01"])
    assert col.frequency == Frequency("M")
    assert col.index[0] == pd.Period("1990-01", "M") and col.index[4999] == pd.Period("2003-09", "M")
    assert col.bad == ((5000, "2023-02-29"), (5001, "1999-13-01"))
