"""Rebase and link (pipeline.indexes)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeline.errors import RealbasisError
from pipeline.indexes import link, rebase
from pipeline.model import MONTHLY, QUARTERLY, Series


def idx_series(name, values, start="2023-01", freq="M", status=None):
    idx = pd.period_range(start, periods=len(values), freq=freq)
    frequency = MONTHLY if freq == "M" else QUARTERLY
    st_ = None if status is None else pd.Series(status, index=idx, dtype=object)
    return Series(name, pd.Series(np.asarray(values, dtype=float), index=idx), frequency,
                  kind="index", status=st_)


def test_rebase_to_a_single_period():
    # I'(t) = 100 * I(t) / I(base) (common practice; DESIGN.md "Rebasing").
    s = idx_series("cpi", [80.0, 100.0, 120.0])
    r = rebase(s, "2023-02")
    assert r.values.tolist() == [80.0, 100.0, 120.0]
    r = rebase(s, "2023-03")
    assert r.values.tolist() == pytest.approx([66.6666667, 83.3333333, 100.0])
    assert r.reference == "2023-03"


def test_monthly_index_rebased_to_a_fiscal_year_is_divided_by_its_12_month_mean():
    # Base period of a multi-month period = simple average of its months (DESIGN.md).
    vals = np.arange(100.0, 136.0)
    s = idx_series("cpi", vals)
    r = rebase(s, pd.Period("2025", "Y-JUN"))  # FY2025, July start
    assert r.reference == "FY2025"
    assert rebase(s, "FY2025", fy_start=7).values.tolist() == pytest.approx(r.values.tolist())
    fy_months = r.values["2024-07":"2025-06"]
    assert fy_months.mean() == pytest.approx(100.0)
    assert r.values["2024-07"] == pytest.approx(100 * 118.0 / np.mean(vals[18:30]))


def test_rebase_to_a_range_and_to_a_calendar_year():
    s = idx_series("cpi", np.linspace(90, 125, 36))
    a = rebase(s, "2024-01..2024-12")
    b = rebase(s, "2024")
    assert a.values.tolist() == pytest.approx(b.values.tolist())
    assert a.values["2024"].mean() == pytest.approx(100.0)
    assert a.reference == "2024-01..2024-12" and b.reference == "2024"


def test_quarterly_index_rebased_to_a_year_uses_its_four_quarters():
    s = idx_series("ppi", [96.0, 98, 102, 104, 106], start="2024Q1", freq="Q")
    r = rebase(s, "2024")
    assert r.values.iloc[:4].mean() == pytest.approx(100.0)
    assert r.values.iloc[4] == pytest.approx(106.0)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(min_value=1.0, max_value=1e4, allow_nan=False), min_size=3,
                max_size=40),
       st.data())
def test_rebasing_leaves_every_percent_change_unchanged(values, data):
    # Percent changes do not move under rebasing (common practice; DESIGN.md "Rebasing").
    s = idx_series("cpi", values)
    k = data.draw(st.integers(0, len(values) - 1))
    r = rebase(s, s.frequency.label(s.index[k]))
    before = s.values.pct_change().dropna().to_numpy()
    after = r.values.pct_change().dropna().to_numpy()
    np.testing.assert_allclose(after, before, rtol=1e-10, atol=1e-12)
    assert r.values.iloc[k] == pytest.approx(100.0)


def test_rebased_values_rest_on_the_base_status():
    status = ["final"] * 10 + ["preliminary"] * 2
    s = idx_series("cpi", np.arange(100.0, 112.0), status=status)
    on_final = rebase(s, "2023-01")
    assert on_final.status.tolist() == status
    on_prelim = rebase(s, "2023-12")
    assert set(on_prelim.status) == {"preliminary"}


def test_base_outside_the_index_is_an_error_listing_the_periods():
    s = idx_series("cpi", np.arange(100.0, 112.0))
    with pytest.raises(RealbasisError) as err:
        rebase(s, "2023-06..2024-02")
    p = err.value.problems[0]
    assert p.code == "IX001"
    assert "2024-01, 2024-02" in p.found and p.where.series == "cpi"


def test_non_positive_base_is_refused():
    s = idx_series("cpi", [0.0, 1.0, 2.0])
    with pytest.raises(RealbasisError) as err:
        rebase(s, "2023-01")
    assert err.value.code == "IX002"


def test_money_series_cannot_be_rebased():
    s = Series("rev", pd.Series([1.0], index=pd.period_range("2023-01", periods=1, freq="M")),
               MONTHLY, kind="flow")
    with pytest.raises(RealbasisError) as err:
        rebase(s, "2023-01")
    assert err.value.code == "IX006"


# --- linking ---------------------------------------------------------------------------


def test_link_at_one_overlap_period_reports_the_factor():
    # I(t) = I_new(t) * I_old(o) / I_new(o) (DESIGN.md; ILO/IMF CPI Manual 2020 on linking
    # series at an overlap period, from memory).
    old = idx_series("old", [90.0, 95.0, 100.0, 104.0], start="2023-01")
    new = idx_series("new", [50.0, 51.0, 52.5], start="2023-04")
    out = link(old, new, "2023-04")
    assert out.factor == pytest.approx(104.0 / 50.0)
    assert out.overlap == "2023-04"
    assert out.series.values.tolist() == pytest.approx([90, 95, 100, 104, 51 * 2.08, 52.5 * 2.08])
    assert "2.08" in out.method
    # the linked series keeps the month-on-month changes of the new segment
    assert out.series.values.iloc[-1] / out.series.values.iloc[-2] == pytest.approx(52.5 / 51)


def test_link_defaults_to_the_latest_common_period():
    old = idx_series("old", [90.0, 95.0, 100.0, 104.0], start="2023-01")
    new = idx_series("new", [49.0, 50.0, 51.0], start="2023-03")
    out = link(old, new)
    assert out.overlap == "2023-04"
    assert out.factor == pytest.approx(104.0 / 50.0)
    assert out.series.values["2023-03"] == 100.0  # old segment before the overlap


def test_annual_overlap_uses_the_years_average():
    old = idx_series("old", np.linspace(100, 123, 24), start="2023-01")
    new = idx_series("new", np.linspace(10, 13, 24), start="2024-01")
    out = link(old, new, annual=True)
    assert out.overlap == "2024"
    factor = np.linspace(100, 123, 24)[12:].mean() / np.linspace(10, 13, 24)[:12].mean()
    assert out.factor == pytest.approx(factor)
    linked_2024 = out.series.values["2024"]
    assert linked_2024.mean() == pytest.approx(np.linspace(100, 123, 24)[12:].mean())


def test_link_status_rests_on_the_overlap():
    old = idx_series("old", [90.0, 95.0, 100.0], status=["final", "final", "preliminary"])
    new = idx_series("new", [50.0, 51.0], start="2023-03")
    out = link(old, new)
    assert out.series.status.tolist() == ["final", "final", "preliminary", "preliminary"]


def test_link_errors():
    old = idx_series("old", [90.0, 95.0])
    new = idx_series("new", [50.0, 51.0], start="2024-01")
    with pytest.raises(RealbasisError) as err:
        link(old, new)
    assert err.value.code == "IX004"
    q = idx_series("q", [1.0, 2.0], start="2023Q1", freq="Q")
    with pytest.raises(RealbasisError) as err:
        link(old, q)
    assert err.value.code == "IX003"
    with pytest.raises(RealbasisError) as err:
        link(old, idx_series("n2", [1.0, 2.0], start="2023-02"), "2023-01")
    assert err.value.code == "IX005"
