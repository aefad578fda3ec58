"""Growth rates and the exact nominal/real/price split (pipeline.growth)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeline.errors import RealbasisError
from pipeline.growth import (
    annualised,
    cagr,
    cumulative,
    growth_table,
    lagged_ratio_wide,
    period_on_period,
    split,
    year_on_year,
)
from pipeline.model import ANNUAL, MONTHLY, QUARTERLY, Series, fiscal_year


def test_statsmodels_macrodata_infl_is_the_annualised_quarterly_log_rate():
    # Source: statsmodels' macrodata dataset (shipped with statsmodels); its documentation
    # defines infl = 400 * ln(cpi_t / cpi_{t-1}), stored rounded to 2 decimals.
    import statsmodels.api as sm

    data = sm.datasets.macrodata.load_pandas().data
    idx = pd.PeriodIndex.from_fields(year=data["year"].astype(int),
                                     quarter=data["quarter"].astype(int), freq="Q")
    cpi = pd.Series(data["cpi"].to_numpy(), index=idx)
    g = annualised(cpi, log=True)
    ours = (g.percent()).round(2).iloc[1:]
    published = pd.Series(data["infl"].to_numpy(), index=idx).iloc[1:]
    assert len(ours) == 202
    np.testing.assert_array_equal(ours.to_numpy(), published.to_numpy())


def test_bea_annual_rate_example():
    # Source: BEA's worked example of an annualised rate (BEA FAQ on "annual rates", cited
    # from memory): a level going from 100 to 105 in one quarter is a 21.55 % change at an
    # annual rate, (105/100)^4 - 1.
    s = pd.Series([100.0, 105.0], index=pd.period_range("2024Q1", periods=2, freq="Q"))
    g = annualised(s)
    assert round(g.percent().iloc[1], 2) == 21.55
    assert g.annualised and not g.log
    rate = cagr(s, "2024Q1", "2024Q2")
    assert round(rate.percent, 2) == 21.55 and rate.years == 0.25


def test_annualised_over_several_periods():
    # (x_t/x_0)^(m/n) - 1 with m = 12 months a year and n = 6 months (DESIGN.md formula).
    s = pd.Series(np.r_[100.0, np.ones(5), 103.0], index=pd.period_range("2024-01", periods=7, freq="M"))
    g = annualised(s, periods=6)
    assert g.values.iloc[-1] == pytest.approx(1.03 ** 2 - 1)


def test_year_on_year_uses_the_calendar_not_positions():
    # A missing month must not pair 2025-03 with 2024-04 (common practice).
    idx = pd.period_range("2024-01", "2025-12", freq="M").delete(14)  # no 2025-03
    s = pd.Series(np.arange(100.0, 100.0 + len(idx)), index=idx)
    g = year_on_year(s, MONTHLY)
    assert g.values["2025-04"] == pytest.approx(s["2025-04"] / s["2024-04"] - 1)
    assert np.isnan(g.values["2024-12"])
    assert g.periods == 12


def test_period_on_period_and_cumulative():
    s = pd.Series([100.0, 110.0, 99.0], index=pd.period_range("2022", periods=3, freq="Y"))
    pop = period_on_period(s)
    assert pop.values.iloc[1:].tolist() == pytest.approx([0.10, -0.10])
    cum = cumulative(s)
    assert cum.values.tolist() == pytest.approx([0.0, 0.10, -0.01])
    cum2 = cumulative(s, start="2023")
    assert cum2.values.tolist() == pytest.approx([0.0, -0.10])


def test_cagr_between_fiscal_years():
    # Compound annual growth (x_end/x_start)^(1/years) - 1 (common practice).
    idx = pd.period_range("2020", periods=6, freq="Y-JUN")
    s = Series("spend", pd.Series([100.0, 0, 0, 0, 0, 161.051], index=idx),
               fiscal_year(7))
    r = cagr(s, "FY2020", "FY2025")
    assert r.value == pytest.approx(0.10) and r.years == 5.0 and r.start == "FY2020"
    with pytest.raises(RealbasisError) as err:
        cagr(s, "FY2025", "FY2020")
    assert err.value.code == "GR005"
    with pytest.raises(RealbasisError) as err:
        cagr(s, "FY2030", "FY2031")
    assert err.value.code == "GR002"


def test_growth_from_a_non_positive_value_is_blank_and_warned():
    s = pd.Series([0.0, 5.0, -2.0, 4.0], index=pd.period_range("2024Q1", periods=4, freq="Q"))
    g = period_on_period(s, QUARTERLY)
    assert g.values.isna().all()
    assert [w.code for w in g.warnings] == ["GR001"]


def test_exact_split_not_the_difference():
    # (1 + nominal) = (1 + real)(1 + price) (DESIGN.md; e.g. 5 % nominal and 2 % prices is
    # 2.94 % real, not 3 %: common practice).
    sp = split(nominal=0.05, price=0.02)
    assert sp.real == pytest.approx(1.05 / 1.02 - 1)
    assert round(sp.real * 100, 2) == 2.94
    assert split(real=sp.real, price=0.02).nominal == pytest.approx(0.05)
    assert split(nominal=0.05, real=sp.real).price == pytest.approx(0.02)
    with pytest.raises(RealbasisError) as err:
        split(nominal=0.05)
    assert err.value.code == "GR004"


@settings(max_examples=80, deadline=None)
@given(st.floats(-0.5, 2.0), st.floats(-0.5, 2.0))
def test_split_identity_holds_exactly(nominal, price):
    sp = split(nominal=nominal, price=price)
    assert (1 + sp.nominal) == pytest.approx((1 + sp.real) * (1 + sp.price), rel=1e-12)


def test_wide_fast_path_matches_the_pandas_measure():
    rng = np.random.default_rng(3)
    arr = rng.uniform(50, 150, size=(30, 4))
    idx = pd.period_range("2023-01", periods=30, freq="M")
    fast = lagged_ratio_wide(arr, 12)
    slow = year_on_year(pd.DataFrame(arr, index=idx)).values.to_numpy()
    np.testing.assert_allclose(fast, slow, equal_nan=True)


def test_growth_table_real_growth_is_the_exact_split_and_the_growth_of_real_values():
    # (1 + nominal) = (1 + real)(1 + price) with price = implicit deflator growth
    # (DESIGN.md; IMF QNA Manual 2017, ch. 8 for the implicit deflator).
    from pipeline.deflate import deflate

    rng = np.random.default_rng(11)
    idx = pd.period_range("2022-01", periods=36, freq="M")
    rev = Series("rev", pd.Series(rng.uniform(80, 120, 36), index=idx), MONTHLY)
    cpi = Series("cpi", pd.Series(np.linspace(100, 112, 36), index=idx), MONTHLY, kind="index")
    res = deflate([rev], [cpi], "2023", to=ANNUAL)
    t = growth_table(res, "rev", "cpi")
    assert t["period"].tolist() == ["2022", "2023", "2024"]
    real_levels = res.real_series("rev")
    direct = (real_levels / real_levels.shift(1) - 1).to_numpy()
    np.testing.assert_allclose(t["real_growth"].to_numpy(), direct, equal_nan=True, rtol=1e-12)
    lhs = 1 + t["nominal_growth"].iloc[1:]
    rhs = (1 + t["real_growth"].iloc[1:]) * (1 + t["price_growth"].iloc[1:])
    np.testing.assert_allclose(lhs, rhs, rtol=1e-12)
    # real growth is not the difference of the two rates
    assert not np.allclose(t["real_growth"].iloc[1:],
                           (t["nominal_growth"] - t["price_growth"]).iloc[1:], rtol=1e-9)
