"""The workspace fiscal year and period fields read with it (pipeline.fiscal), and FY bases
on monthly, quarterly and fiscal series and indexes.

Fiscal years are named by the calendar year they end in: the US federal fiscal year runs
1 October to 30 September (31 U.S.C. 1102) and FY2025 ends in September 2025; the UK
financial year runs April to March and "2024-25" is April 2024 to March 2025 (HM
Treasury, *Managing Public Money*). July-June years follow the same naming (common
practice). The demo files are invented and illustrative (plumbing, not correctness)."""

from __future__ import annotations

import pandas as pd
import pytest
from conftest import DEMO
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeline.deflate import deflate
from pipeline.errors import RealbasisError
from pipeline.fiscal import (
    examples,
    fiscal_start_of,
    infer_fiscal_start,
    read_period,
    with_fiscal_start,
    workspace_fiscal_year,
)
from pipeline.indexes import link, rebase
from pipeline.ingest import read_file
from pipeline.model import ANNUAL, MONTHLY, QUARTERLY, Frequency, Series, Workspace
from pipeline.projection import project


def fy_series(name: str, start: int, kind: str = "flow") -> Series:
    f = Frequency("FY", start)
    idx = pd.period_range(pd.Period("2024", f.pandas_freq), periods=3, freq=f.pandas_freq)
    return Series(name, pd.Series([1.0, 2.0, 3.0], index=idx), f, kind=kind)  # type: ignore[arg-type]


def monthly_index(name="Monthly index", start="2023-01", n=36, growth=0.003) -> Series:
    idx = pd.period_range(start, periods=n, freq="M")
    vals = 100.0 * (1 + growth) ** pd.Series(range(n), index=idx, dtype=float)
    return Series(name, vals, MONTHLY, kind="index")


# --------------------------------------------------------------------------- fiscal year


def test_fiscal_series_that_agree_set_the_workspace_fiscal_year():
    fy = infer_fiscal_start([fy_series("Bus", 7), fy_series("Rail", 7), monthly_index()])
    assert (fy.month, fy.source) == (7, "series")
    assert fy.found == {7: ("Bus", "Rail")}
    assert "FY2025 = July 2024 to June 2025" in fy.describe()
    assert fy.frequency() == Frequency("FY", 7)


def test_fiscal_series_that_disagree_leave_it_unknown_and_say_so():
    fy = infer_fiscal_start([fy_series("Bus", 7), fy_series("Grants", 10)])
    assert fy.month is None and fy.source == "disagree"
    (w,) = fy.warnings
    assert w.code == "PE301" and w.remedy == "fiscal_start"
    assert "July" in w.found and "October" in w.found


def test_the_saved_setting_wins_and_a_disagreeing_series_is_reported():
    fy = infer_fiscal_start([fy_series("Bus", 7)], setting=10)
    assert (fy.month, fy.source) == (10, "setting")
    assert fy.warnings[0].code == "PE301"
    assert infer_fiscal_start([monthly_index()]).source == "none"
    assert "need the month" in infer_fiscal_start([]).describe()


def test_workspace_fiscal_year_of_the_demo_programs():
    spending = read_file(DEMO / "tallmere_program_spending.csv", fy_start=7)
    consumer = read_file(DEMO / "consumer_indexes.csv")
    ws = Workspace("d", "demo", series={s.name: s for s in spending.series},
                   indexes={s.name: {"": s} for s in consumer.series})
    fy = workspace_fiscal_year(ws)
    assert (fy.month, fy.source) == (7, "series")
    assert fy.method_note()[0].startswith("Fiscal years start in July")
    # set on the workspace, saved in its settings; None lets the series decide again
    set10 = with_fiscal_start(ws, 10)
    assert set10.settings["fy_start"] == 10 and fiscal_start_of(set10) == 10
    assert fiscal_start_of(with_fiscal_start(set10, None)) == 7
    with pytest.raises(RealbasisError) as e:
        with_fiscal_start(ws, 13)
    assert e.value.code == "PE104"


# --------------------------------------------------------------------------- period fields


def test_fiscal_labels_spans_and_ranges():
    # US federal fiscal year (31 U.S.C. 1102): FY2025 = October 2024 - September 2025
    us = read_period("FY2025", 10, frequency=MONTHLY)
    assert us.describe() == "FY2025 (October 2024 to September 2025)"
    # UK financial year (HM Treasury): 2024-25 = April 2024 - March 2025
    uk = read_period("2024-25", 4, frequency=MONTHLY)
    assert uk.describe() == "FY2025 (April 2024 to March 2025)"
    july = read_period("FY2025..FY2027", 7, frequency=QUARTERLY)
    assert july.describe() == "FY2025..FY2027 (July 2024 to June 2027)"
    assert read_period("2024-25..2026-27", 7).label == "FY2025..FY2027"
    assert read_period("FY2025Q1", 7).describe() == "FY2025Q1 (July 2024 to September 2024)"
    # calendar labels are read as ever, with or without a fiscal year
    assert read_period("2024Q1", 7, frequency=MONTHLY).label == "2024Q1"
    assert read_period("2024-01..2024-12", None, frequency=MONTHLY).n_months == 12
    # a fiscal series' own start serves when the workspace has none
    assert read_period("FY2025", None, frequency=Frequency("FY", 7)).first_month == \
        pd.Period("2024-07", "M").ordinal


@settings(max_examples=60, deadline=None)
@given(start=st.integers(2, 12), year=st.integers(1990, 2060))
def test_fy_label_and_span_label_name_the_same_twelve_months(start, year):
    a = read_period(f"FY{year}", start)
    assert read_period(f"{year - 1}-{year}", start) == a and a.n_months == 12
    if year % 100 > 12:  # 2000-01 alone is January 2000 (labels.py: a month wins alone)
        assert read_period(f"{year - 1}-{year % 100:02d}", start) == a
    last = pd.Period(ordinal=a.last_month, freq="M")
    assert last.year == year and last.month == start - 1  # ends in the year it is named by


def test_period_field_errors_are_coded_with_neutral_fixes():
    with pytest.raises(RealbasisError) as e:
        read_period("FY2025", None, frequency=MONTHLY)
    assert e.value.code == "PE102" and e.value.problems[0].remedy == "fiscal_start"
    with pytest.raises(RealbasisError) as e:
        read_period("  ", 7, use="until")
    p = e.value.problems[0]
    assert p.code == "PE202" and "end of the projection" in p.message
    assert p.expected == examples(7)
    with pytest.raises(RealbasisError) as e:
        read_period("FY2025", 7, frequency=ANNUAL)
    assert e.value.code == "PE203"
    with pytest.raises(RealbasisError) as e:
        read_period("FY2025", 7, frequency=ANNUAL, use="overlap")
    assert e.value.code == "PE302" and "overlap" in e.value.problems[0].message
    with pytest.raises(RealbasisError) as e:
        read_period("2024-25", 1)
    assert e.value.code == "PE105"
    with pytest.raises(RealbasisError) as e:
        read_period("FY2025..", 7, use="span")
    assert e.value.code == "PE202" and "span" in e.value.problems[0].message
    # the end of a projection needs no fit: an annual index stops at its last whole year
    assert read_period("FY2030", 7, frequency=ANNUAL, use="until").label == "FY2030"


# --------------------------------------------------------------------------- FY bases


def test_monthly_index_rebased_to_a_fiscal_year():
    # rebasing: I'(t) = 100 I(t) / mean(I over the base) (DESIGN.md); FY2025 with a July
    # start is the 12 months July 2024 - June 2025
    ix = monthly_index()
    out = rebase(ix, read_period("FY2025", 7, frequency=ix.frequency))
    base = ix.values[pd.Period("2024-07", "M"):pd.Period("2025-06", "M")].mean()
    assert out.values.iloc[0] == pytest.approx(100 * ix.values.iloc[0] / base, rel=1e-13)
    assert out.reference == "FY2025"
    assert rebase(ix, "FY2025", fy_start=7).values.equals(out.values)


def test_quarterly_index_rebased_to_a_fiscal_year():
    q = pd.period_range("2023Q1", "2026Q4", freq="Q-DEC")
    ix = Series("Q index", pd.Series(range(100, 116), index=q, dtype=float), QUARTERLY,
                kind="index")
    out = rebase(ix, "FY2025", fy_start=7)
    base = ix.values[pd.Period("2024Q3", "Q"):pd.Period("2025Q2", "Q")].mean()
    assert out.values.iloc[0] == pytest.approx(100 * 100 / base)


def test_link_at_a_fiscal_year_overlap():
    # linking at an overlap o: I(t) = I_new(t) x I_old(o) / I_new(o), o a whole year whose
    # averages are used (DESIGN.md)
    old = monthly_index("Old", "2022-01", 48)
    new = monthly_index("New", "2024-01", 30, growth=0.004).with_values(
        monthly_index("New", "2024-01", 30, growth=0.004).values * 1.7)
    res = link(old, new, "FY2025", fy_start=7)
    assert res.overlap == "FY2025"
    months = pd.period_range("2024-07", "2025-06", freq="M")
    assert res.factor == pytest.approx(old.values.reindex(months).mean()
                                       / new.values.reindex(months).mean())


def test_projection_until_a_fiscal_year_of_a_monthly_index():
    ix = monthly_index()
    p = project(ix, "2.5%", until="FY2030", fy_start=7)
    assert p.last == "2030-06"
    p2 = project(ix, {"FY2026": "3%", "FY2027": 0.02, "FY2028": 0.02, "FY2029": 0.02,
                      "FY2030": 0.02}, until="2029-30", fy_start=7)
    assert p2.year_frequency == Frequency("FY", 7)
    assert p2.rates["FY2026"] == pytest.approx(0.03)


def test_monthly_and_fiscal_series_deflated_at_a_fiscal_year_base_on_the_demo():
    revenue = read_file(DEMO / "harbourline_revenue.csv").series
    consumer = read_file(DEMO / "consumer_indexes.csv").series[0]
    res = deflate(list(revenue), [consumer], "FY2025", fy_start=7)
    assert res.base_label == "FY2025" and res.dollars_label == "constant FY2025 dollars"
    rebased = res.deflators_used[0].values
    fy25 = pd.period_range("2024-07", "2025-06", freq="M")
    assert rebased.reindex(fy25).mean() == pytest.approx(100.0, rel=1e-12)
    spending = read_file(DEMO / "tallmere_program_spending.csv", fy_start=7).series
    gcd = read_file(DEMO / "government_consumption_deflator.csv").series[0]
    res = deflate(list(spending), [gcd], "FY2025", fy_start=7)
    t = res.table()
    row = t[(t.series == "Bus operations") & (t.period == "FY2025")]
    assert float(row["real"].iloc[0]) == pytest.approx(float(row["nominal"].iloc[0]))
    assert set(t[t.period >= "FY2027"]["status"]) == {"projected"}
