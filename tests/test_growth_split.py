"""The growth table (pipeline.growth.split_table) against statsmodels' macrodata.

Source: statsmodels' ``macrodata`` dataset (shipped with statsmodels), US quarterly
1959Q1-2009Q3: ``realcons`` (real personal consumption expenditures, chained dollars) and
``cpi`` (consumer price index). Nominal consumption is made as realcons x cpi / 100 (as the
issue defines it), so deflating it by the cpi gives back realcons up to a constant factor
(the rebasing): the table's real growth must be realcons' growth, its price growth the
cpi's and its nominal growth that of realcons x cpi, with the exact split
(1 + nominal) = (1 + real)(1 + price).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from pipeline.deflate import deflate
from pipeline.errors import RealbasisError
from pipeline.growth import SPLIT_COLUMNS, split_table
from pipeline.model import QUARTERLY, Series


@pytest.fixture(scope="module")
def macro():
    import statsmodels.api as sm

    data = sm.datasets.macrodata.load_pandas().data
    idx = pd.PeriodIndex.from_fields(year=data["year"].astype(int),
                                     quarter=data["quarter"].astype(int), freq="Q")
    realcons = data["realcons"].to_numpy()
    cpi = data["cpi"].to_numpy()
    nominal = Series("consumption", pd.Series(realcons * cpi / 100, index=idx), QUARTERLY,
                     unit="USD billions")
    index = Series("cpi", pd.Series(cpi, index=idx), QUARTERLY, kind="index")
    return nominal, index, realcons, cpi


def test_growth_table_reproduces_realcons_growth(macro):
    # statsmodels macrodata: deflating realcons x cpi / 100 by cpi gives realcons' growth.
    nominal, index, realcons, cpi = macro
    res = deflate([nominal], [index], "2000")
    t = split_table(res).table
    assert tuple(t.columns) == SPLIT_COLUMNS
    assert t["measure"].value_counts().to_dict() == {"period": 202, "annualised": 202,
                                                     "yoy": 199, "cagr": 1, "cumulative": 1}
    g = realcons[1:] / realcons[:-1] - 1
    per = t[t["measure"] == "period"]
    np.testing.assert_allclose(per["real_pct"], 100 * g, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(per["price_pct"], 100 * (cpi[1:] / cpi[:-1] - 1), rtol=1e-9)
    nom = realcons * cpi
    np.testing.assert_allclose(per["nominal_pct"], 100 * (nom[1:] / nom[:-1] - 1), rtol=1e-12)
    assert per["start"].iloc[0] == "1959Q1" and per["end"].iloc[0] == "1959Q2"
    # annualised at m = 4 quarters a year: (x_t / x_t-1)^4 - 1
    ann = t[t["measure"] == "annualised"]
    np.testing.assert_allclose(ann["real_pct"], 100 * ((1 + g) ** 4 - 1), rtol=1e-11,
                               atol=1e-12)
    # year on year: the same quarter a year earlier
    yoy = t[t["measure"] == "yoy"]
    np.testing.assert_allclose(yoy["real_pct"], 100 * (realcons[4:] / realcons[:-4] - 1),
                               rtol=1e-11, atol=1e-12)
    assert yoy["start"].iloc[0] == "1959Q1" and yoy["end"].iloc[0] == "1960Q1"
    # cagr and cumulative, first to last quarter: 50.5 years
    cum = t[t["measure"] == "cumulative"].iloc[0]
    assert cum["real_pct"] == pytest.approx(100 * (realcons[-1] / realcons[0] - 1), rel=1e-12)
    assert (cum["start"], cum["end"]) == ("1959Q1", "2009Q3")
    rate = t[t["measure"] == "cagr"].iloc[0]
    years = 202 / 4
    assert rate["real_pct"] == pytest.approx(
        100 * ((realcons[-1] / realcons[0]) ** (1 / years) - 1), rel=1e-12)
    assert rate["price_pct"] == pytest.approx(
        100 * ((cpi[-1] / cpi[0]) ** (1 / years) - 1), rel=1e-9)


def test_the_split_is_exact_in_every_row(macro):
    # (1 + nominal) = (1 + real)(1 + price): DESIGN.md, "real growth is exact".
    nominal, index, _, _ = macro
    other = index.with_values(index.values * np.linspace(1, 1.2, len(index.values)),
                              name="cpi, tilted")
    res = deflate([nominal], [index, other], "2000Q1")
    t = split_table(res).table
    assert set(t["deflator"]) == {"cpi", "cpi, tilted"}
    lhs = 1 + t["nominal_pct"] / 100
    rhs = (1 + t["real_pct"] / 100) * (1 + t["price_pct"] / 100)
    np.testing.assert_allclose(lhs, rhs, rtol=1e-13)
    # rows are ordered series, deflator, measure, period
    assert t["deflator"].tolist()[:605] == ["cpi"] * 605


def test_rates_left_blank_where_values_cross_zero_with_a_warning():
    idx = pd.period_range("2024Q1", periods=4, freq="Q")
    s = Series("net", pd.Series([100.0, -5.0, 20.0, 30.0], index=idx), QUARTERLY)
    d = Series("index", pd.Series([100.0, 101, 102, 103], index=idx), QUARTERLY, kind="index")
    res = split_table(deflate([s], [d], "2024Q1"))
    per = res.table[res.table["measure"] == "period"]
    assert per["real_pct"].isna().tolist() == [True, True, False]
    assert [w.code for w in res.warnings] == ["GR001"]


def test_unknown_measure_is_a_coded_error(macro):
    nominal, index, _, _ = macro
    with pytest.raises(RealbasisError) as info:
        split_table(deflate([nominal], [index], "2000"), measures=("weekly",))
    assert info.value.code == "GR006"
