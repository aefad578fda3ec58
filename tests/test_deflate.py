"""Deflation into constant dollars of a base period (pipeline.deflate)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeline.commands._remedies import CLI
from pipeline.deflate import TABLE_COLUMNS, deflate, deflate_frame
from pipeline.errors import RealbasisError, fix_text
from pipeline.model import ANNUAL, MONTHLY, QUARTERLY, Frequency, Series, fiscal_year


def series(name, values, start, freq=MONTHLY, kind="flow", status=None):
    idx = pd.period_range(start, periods=len(values), freq=freq.pandas_freq)
    st_ = None if status is None else pd.Series(status, index=idx, dtype=object)
    return Series(name, pd.Series(np.asarray(values, dtype=float), index=idx), freq,
                  kind=kind, status=st_)


def index(name, values, start, freq=MONTHLY, status=None):
    return series(name, values, start, freq, kind="index", status=status)


# --- published worked examples ---------------------------------------------------------


def test_omb_table_10_1_fy1940_gdp_in_fy1996_dollars():
    # Source: OMB Historical Tables, Table 10.1 (Gross Domestic Product and deflators used
    # in the historical tables; FY1996 = 1.000): FY1940 GDP $96.7 billion with a chained
    # GDP price index of 0.1030 is $938.8 billion in constant FY1996 dollars. The table is
    # by federal fiscal year; an October start labels FY1996 correctly (the FY1940 start
    # month does not change this one-value check).
    fy = fiscal_year(10)
    gdp = series("GDP", [96.7], "1940", fy)
    vals = np.full(57, np.nan)
    vals[0], vals[-1] = 0.1030, 1.000
    price = index("GDP chained price index", vals, "1940", fy)
    res = deflate([gdp], [price], "FY1996", fy_start=10)
    row = res.table().iloc[0]
    assert row["period"] == "FY1940"
    assert round(row["real"], 1) == 938.8
    assert row["deflator_index"] == pytest.approx(10.30)  # rebased so FY1996 = 100
    assert res.base_label == "FY1996"


def test_hm_treasury_gdp_deflator_note_2004():
    # Source: HM Treasury, "GDP deflators at market prices, and money GDP" user note (2004):
    # with deflators 91.031 (1998-99) and 102.789 (2003-04), GBP 7.4m in 1998-99 prices is
    # GBP 8.36m in 2003-04 prices. UK fiscal years start in April: 1998-99 = FY1999.
    fy = fiscal_year(4)
    spend = series("programme", [7.4], "1999", fy)
    vals = [91.031, np.nan, np.nan, np.nan, np.nan, 102.789]
    defl = index("GDP deflator", vals, "1999", fy)
    res = deflate([spend], [defl], "FY2004", fy_start=4)
    assert round(res.real_series("programme").iloc[0], 2) == 8.36


# --- properties ------------------------------------------------------------------------


positive = st.floats(min_value=1.0, max_value=1e6, allow_nan=False, allow_infinity=False)


@settings(max_examples=40, deadline=None)
@given(st.lists(positive, min_size=24, max_size=24), st.lists(
    st.floats(min_value=50.0, max_value=200.0), min_size=24, max_size=24),
    st.integers(0, 23))
def test_deflating_in_the_base_period_returns_the_nominal_value(nom, idx_vals, k):
    # real(B) = nominal(B) * I(B) / I(B) = nominal(B) (DESIGN.md "Constant dollars").
    s = series("rev", nom, "2023-01")
    d = index("cpi", idx_vals, "2023-01")
    base = MONTHLY.label(s.index[k])
    res = deflate([s], [d], base)
    assert res.real_series("rev").iloc[k] == pytest.approx(nom[k], rel=1e-12)
    assert res.index_frame().iloc[k, 0] == pytest.approx(100.0)


@settings(max_examples=40, deadline=None)
@given(st.lists(positive, min_size=24, max_size=24), st.lists(
    st.floats(min_value=50.0, max_value=200.0), min_size=24, max_size=24))
def test_annual_real_is_the_sum_of_monthly_reals_and_implicit_deflator(nom, idx_vals):
    # IMF Quarterly National Accounts Manual 2017, ch. 8: deflate at the highest frequency,
    # then sum; the implicit annual deflator is nominal / real, not the index average.
    s = series("rev", nom, "2023-01")
    d = index("cpi", idx_vals, "2023-01")
    monthly = deflate([s], [d], "2023")
    annual = deflate([s], [d], "2023", to=ANNUAL)
    m = monthly.real_series("rev")
    a = annual.real_series("rev")
    assert a.tolist() == pytest.approx([m["2023"].sum(), m["2024"].sum()], rel=1e-12)
    t = annual.table()
    implicit = 100 * t["nominal"] / t["real"]
    np.testing.assert_allclose(t["deflator_index"], implicit, rtol=1e-12)
    assert t["nominal"].tolist() == pytest.approx([sum(nom[:12]), sum(nom[12:])])


# --- alignment -------------------------------------------------------------------------


def test_table_has_exactly_the_contract_columns_and_canonical_labels():
    s = series("rev", [10.0] * 24, "2024-07")
    d1 = index("cpi", np.linspace(100, 110, 24), "2024-07")
    d2 = index("ppi", np.linspace(100, 120, 24), "2024-07")
    res = deflate([s], [d1, d2], "FY2025", to=fiscal_year(7))
    t = res.table()
    assert tuple(t.columns) == TABLE_COLUMNS == (
        "series", "deflator", "period", "nominal", "deflator_index", "real", "status")
    assert t["period"].tolist() == ["FY2025", "FY2026"] * 2
    assert t["deflator"].tolist() == ["cpi", "cpi", "ppi", "ppi"]
    q = deflate([s], [d1], "FY2025", to=Frequency("Q", 7)).table()
    assert q["period"].iloc[0] == "FY2025Q1"
    c = deflate([s], [d1], "2025", to=QUARTERLY).table()
    assert c["period"].iloc[0] == "2024Q3"
    assert deflate([s], [d1], "2025", to=ANNUAL).table()["period"].tolist() == ["2025"]


def test_monthly_deflator_averaged_for_a_quarterly_flow():
    # The index of a multi-month period is the simple average of its months (DESIGN.md).
    s = series("rev", [300.0], "2024Q1", QUARTERLY)
    d = index("cpi", [100.0, 101.0, 105.0, 110.0], "2023-12")
    res = deflate([s], [d], "2023-12")  # base December 2023 = 100
    q1 = (101.0 + 105.0 + 110.0) / 3  # January-March 2024
    assert res.index_frame().iloc[0, 0] == pytest.approx(q1)
    assert res.real_series("rev").iloc[0] == pytest.approx(300 * 100 / q1)


def test_stock_uses_the_index_of_the_periods_last_month():
    # Point-in-time amounts use the index of that month (DESIGN.md, common practice).
    s = series("cash", [500.0], "2024Q1", QUARTERLY, kind="stock")
    d = index("cpi", [100.0, 101.0, 105.0, 110.0], "2023-12")
    res = deflate([s], [d], "2023-12")  # March 2024 closes the quarter
    assert res.real_series("cash").iloc[0] == pytest.approx(500 * 100 / 110.0)
    # a monthly stock shown quarterly takes the real value of the quarter's last month
    m = series("cash", [1.0, 2.0, 3.0], "2024-01", kind="stock")
    q = deflate([m], [d], "2023-12", to=QUARTERLY)
    assert q.real_series("cash").iloc[0] == pytest.approx(3.0 * 100 / 110.0)


def test_series_more_frequent_than_its_deflator_is_refused_with_a_code():
    s = series("rev", [1.0] * 6, "2024-01")
    d = index("cpi", [100.0, 102.0], "2024Q1", QUARTERLY)
    with pytest.raises(RealbasisError) as err:
        deflate([s], [d], "2024Q1")
    assert err.value.code == "PE204"
    # the engine's fix is neutral; the command line renders the remedy as its option
    # two remedies: a longer result period, or (command line) interpolation
    assert err.value.problems[0].remedy.split() == ["result_frequency", "interpolate"]
    assert "--to" in fix_text(err.value.problems[0], CLI)
    assert "--interpolate" in fix_text(err.value.problems[0], CLI)


def test_monthly_series_with_quarterly_deflator_works_at_quarterly_when_asked():
    # Highest frequency both share = quarterly (IMF QNA Manual 2017, ch. 8).
    s = series("rev", [1.0, 2.0, 3.0, 4.0, 5.0, 6.0], "2024-01")
    d = index("cpi", [100.0, 120.0], "2024Q1", QUARTERLY)
    res = deflate([s], [d], "2024Q1", to=QUARTERLY)
    assert res.real_series("rev").tolist() == pytest.approx([6.0, 15.0 / 1.2])
    assert res.interpolated is None


def test_interpolation_is_flagged_on_every_value_it_touches():
    s = series("rev", [1.0] * 6, "2024-01")
    d = index("cpi", [100.0, 103.0], "2024Q1", QUARTERLY)
    res = deflate([s], [d], "2024Q1", interpolate=True)
    t = res.table(flags=True)
    assert t["interpolated"].all() and res.has_interpolation
    assert tuple(res.table().columns) == TABLE_COLUMNS  # flags only on request
    assert [w.code for w in res.warnings] == ["PE208"]
    assert any("interpolated" in m for m in res.method_note())


def test_missing_index_periods_are_an_error_listing_them():
    s = series("rev", [1.0] * 12, "2024-01")
    d = index("cpi", [100.0] * 9, "2024-01")
    with pytest.raises(RealbasisError) as err:
        deflate([s], [d], "2024-01")
    p = err.value.problems[0]
    assert p.code == "DF001"
    assert p.found == "missing 2024-10, 2024-11, 2024-12"
    assert p.where.series == "rev" and p.where.column == "cpi"


def test_base_outside_a_deflator_is_an_error():
    s = series("rev", [1.0] * 12, "2024-01")
    d = index("cpi", [100.0] * 12, "2024-01")
    with pytest.raises(RealbasisError) as err:
        deflate([s], [d], "2023")
    assert err.value.code == "IX001"


def test_status_travels_including_the_base_period():
    status = ["final"] * 10 + ["preliminary", "projected"]
    s = series("rev", [1.0] * 12, "2024-01")
    d = index("cpi", np.linspace(100, 111, 12), "2024-01", status=status)
    on_final_base = deflate([s], [d], "2024-01").table()["status"].tolist()
    assert on_final_base == status
    on_prelim_base = deflate([s], [d], "2024-11").table()["status"].tolist()
    assert on_prelim_base == ["preliminary"] * 11 + ["projected"]
    quarterly = deflate([s], [d], "2024-01", to=QUARTERLY).table()["status"].tolist()
    assert quarterly == ["final", "final", "final", "projected"]
    res = deflate([s], [d], "2024-01")
    assert any(w.code == "DF010" for w in res.warnings)


def test_partial_periods_in_the_requested_frequency_are_reported():
    s = series("rev", [1.0] * 14, "2024-01")
    d = index("cpi", [100.0] * 14, "2024-01")
    res = deflate([s], [d], "2024", to=ANNUAL)
    assert res.table()["period"].tolist() == ["2024"]
    assert [w.where.period for w in res.warnings if w.code == "PE210"] == ["2025"]


def test_many_series_many_deflators_in_one_pass():
    rng = np.random.default_rng(7)
    frame = pd.DataFrame(rng.uniform(1, 10, size=(24, 5)),
                         index=pd.period_range("2024-01", periods=24, freq="M"),
                         columns=[f"s{i}" for i in range(5)])
    defl = [index(f"d{k}", rng.uniform(90, 110, 24), "2024-01") for k in range(3)]
    res = deflate_frame(frame, defl, "2024", frequency=MONTHLY)
    assert res.real.shape == (3, 24, 5)
    for k, d in enumerate(defl):
        base = d.values["2024"].mean()
        expected = frame.to_numpy() * base / d.values.to_numpy()[:, None]
        np.testing.assert_allclose(res.real[k], expected, rtol=1e-12)
    assert len(res.table()) == 3 * 24 * 5


def test_series_of_different_frequencies():
    m = series("monthly rev", [1.0] * 12, "2024-01")
    q = series("quarterly rev", [3.0] * 4, "2024Q1", QUARTERLY)
    d = index("cpi", np.linspace(100, 111, 12), "2024-01")
    with pytest.raises(RealbasisError) as err:
        deflate([m, q], [d], "2024")
    assert err.value.code == "DF002"
    res = deflate([m, q], [d], "2024", to=QUARTERLY)
    real = res.real_frame()
    rebased = d.values / d.values.mean() * 100  # base 2024 = 100
    monthly_real = 1.0 * 100 / rebased
    # the monthly series is deflated month by month, then summed (IMF QNA Manual 2017, ch. 8)
    np.testing.assert_allclose(real["monthly rev"], monthly_real.groupby(
        monthly_real.index.asfreq("Q")).sum().to_numpy())
    # the quarterly one by the quarter's average index
    q_index = rebased.groupby(rebased.index.asfreq("Q")).mean()
    np.testing.assert_allclose(real["quarterly rev"], 3.0 * 100 / q_index.to_numpy())


def test_bad_requests_are_coded():
    s = series("rev", [1.0] * 12, "2024-01")
    d = index("cpi", [100.0] * 12, "2024-01")
    with pytest.raises(RealbasisError) as err:
        deflate([d], [d], "2024")
    assert err.value.code == "DF003"
    a = series("rev", [1.0], "2024", ANNUAL)
    with pytest.raises(RealbasisError) as err:
        deflate([a], [d], "2024", to=MONTHLY)
    assert err.value.code == "DF004"
    with pytest.raises(RealbasisError) as err:
        deflate([s, s], [d], "2024")
    assert err.value.code == "DF005"
    with pytest.raises(RealbasisError) as err:
        deflate([], [d], "2024")
    assert err.value.code == "DF006"
    neg = index("cpi", [100.0] * 11 + [-1.0], "2024-01")
    with pytest.raises(RealbasisError) as err:
        deflate([s], [neg], "2024-01")
    assert err.value.code == "DF007"


def test_projected_nominal_amounts_mark_their_real_values():
    # A real figure resting on a projected value must say so (DESIGN.md); here the
    # projection is in the money series (proposed out-year budget), the index is final.
    fy = fiscal_year(7)
    spend = series("capital", [100.0, 110.0, 120.0], "2025", fy,
                   status=["final", "final", "projected"])
    d = index("deflator", [100.0, 103.0, 106.0], "2025", fy)
    t = deflate([spend], [d], "FY2025").table()
    assert t["status"].tolist() == ["final", "final", "projected"]


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 11), st.integers(1, 12), st.sampled_from(["Q", "A", "FY"]),
       st.integers(20, 40), st.booleans())
def test_any_calendar_aggregate_is_the_sum_or_last_of_the_monthly_reals(
        offset, fy_start, code, n, stock):
    # IMF QNA Manual 2017, ch. 8: deflate monthly, then sum (flows) or take the last
    # value (stocks) over each complete quarter / calendar year / fiscal year, fiscal
    # years and quarters starting in any month.
    rng = np.random.default_rng(offset * 100 + fy_start + n)
    start = pd.Period("2020-01", "M") + offset
    kind = "stock" if stock else "flow"
    s = series("x", rng.uniform(10, 20, n), str(start), kind=kind)
    d = index("d", rng.uniform(90, 110, n + 12), str(start - 6))
    target = Frequency(code, fy_start) if code != "A" else ANNUAL
    base = MONTHLY.label(start + n // 2)
    monthly = deflate([s], [d], base).real_series("x")
    agg = deflate([s], [d], base, to=target)
    got = agg.real_series("x")
    groups = monthly.groupby(monthly.index.asfreq(target.pandas_freq, how="end"))
    want = groups.last() if stock else groups.sum()
    if stock:  # a stock's period value is its closing balance: the last month must be there
        last_month = groups.apply(lambda g: g.index[-1])
        ends = want.index.asfreq("M", how="end")
        complete = want[np.asarray(last_month.to_numpy() == ends)]
    else:  # a flow needs every month of the period
        complete = want[groups.size() == target.months_per_period]
    assert target.labels(got.index) == target.labels(complete.index)
    np.testing.assert_allclose(got.to_numpy(), complete.to_numpy(), rtol=1e-12)
