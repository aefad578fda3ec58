"""Out-year projection of an index; then-year <-> constant-year dollars."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from pipeline.errors import RealbasisError
from pipeline.model import ANNUAL, MONTHLY, Frequency, Series
from pipeline.projection import project


def monthly_index(n=24, start="2023-01"):
    idx = pd.period_range(start, periods=n, freq="M")
    return Series("Consumer index, chained", pd.Series(100 * 1.002 ** np.arange(n), index=idx),
                  MONTHLY, kind="index")


def test_one_rate_compounds_to_the_annual_rate():
    # Compounding an annual rate over sub-periods: (1+r)^(1/m) per period (common
    # practice; same rule as the annualisation formula in DESIGN.md).
    ix = monthly_index()
    res = project(ix, 0.025, until="2026")
    s = res.series
    last = ix.values.iloc[-1]
    assert s.index[-1] == pd.Period("2026-12", "M")
    assert s.values[pd.Period("2025-12", "M")] == pytest.approx(last * 1.025)
    assert s.values[pd.Period("2026-12", "M")] == pytest.approx(last * 1.025 ** 2)
    assert s.stretches()["projected"] == ("2025-01", "2026-12")
    assert s.status_or_final()[pd.Period("2024-12", "M")] == "final"
    assert res.rates == {"2025": 0.025, "2026": 0.025}
    assert any(w.code == "WS205" for w in res.warnings)
    assert "assumptions" in " ".join(res.method_note())


def test_rate_per_fiscal_year_on_fiscal_index():
    # Out-year budgets: fiscal years labelled by the year they end (DESIGN.md; common
    # practice of budget offices), one assumed rate per fiscal year.
    fy = Frequency("FY", 7)
    idx = pd.period_range(pd.Period("2024", "Y-JUN"), periods=2, freq="Y-JUN")
    ix = Series("Government deflator", pd.Series([100.0, 103.0], index=idx), fy, kind="index")
    res = project(ix, {"FY2026": 0.03, "FY2027": 0.025, 2028: 0.02}, until="FY2028")
    vals = res.series.values.to_numpy()
    assert vals[2:] == pytest.approx([103 * 1.03, 103 * 1.03 * 1.025, 103 * 1.03 * 1.025 * 1.02])
    assert list(res.rates) == ["FY2026", "FY2027", "FY2028"]
    assert res.table()["status"].tolist() == ["final", "final"] + ["projected"] * 3


def test_monthly_index_with_fiscal_year_rates_and_trailing_gap():
    ix = monthly_index(18, start="2024-01")  # Jan 2024 .. Jun 2025
    vals = ix.values.copy()
    vals.iloc[-1] = np.nan  # June 2025 not published yet: projected from May
    ix = ix.with_values(vals)
    res = project(ix, {"FY2025": 0.03, "FY2026": 0.02}, until="FY2026",
                  year_frequency=Frequency("FY", 7))
    s = res.series.values
    may = vals.iloc[-2]
    assert s[pd.Period("2025-06", "M")] == pytest.approx(may * 1.03 ** (1 / 12))
    assert s[pd.Period("2026-06", "M")] == pytest.approx(may * 1.03 ** (1 / 12) * 1.02)
    assert res.first == "2025-06" and res.last == "2026-06"


def test_projection_errors_are_coded():
    ix = monthly_index()
    with pytest.raises(RealbasisError) as e:
        project(ix, {"2025": 0.02}, until="2026")
    assert e.value.code == "WS201" and "2026" in str(e.value)
    with pytest.raises(RealbasisError) as e:
        project(ix, 2.5, until="2026")  # 2.5 meant as percent
    assert e.value.code == "WS202"
    with pytest.raises(RealbasisError) as e:
        project(ix, 0.02, until="2024-06")
    assert e.value.code == "WS203"
    money = Series("Revenue", pd.Series([1.0, 2.0], index=pd.period_range("2020", periods=2,
                                                                          freq="Y")), ANNUAL)
    with pytest.raises(RealbasisError) as e:
        project(money, 0.02, until="2025")
    assert e.value.code == "WS204"


def test_then_year_and_constant_dollars_round_trip_by_hand():
    # constant(t) = then(t) x I(B)/I(t) and back (DESIGN.md "constant dollars of base
    # period B"; common practice of out-year budgeting). Annual deflator projected 2%.
    from pipeline.projection import to_constant, to_then_year

    fy = Frequency("FY", 7)
    years = pd.period_range(pd.Period("2025", "Y-JUN"), periods=2, freq="Y-JUN")
    ix = Series("Deflator", pd.Series([100.0, 102.5], index=years), fy, kind="index")
    ix = project(ix, 0.02, until="FY2028").series
    out_years = pd.period_range(pd.Period("2025", "Y-JUN"), periods=4, freq="Y-JUN")
    budget = Series("Bus operations", pd.Series([50.0, 52.0, 54.0, 56.0], index=out_years),
                    fy, kind="flow")
    conv = to_constant([budget], ix, "FY2025")
    t = conv.table
    assert t["period"].tolist() == ["FY2025", "FY2026", "FY2027", "FY2028"]
    i28 = 102.5 * 1.02 ** 2
    assert t["constant"].iloc[3] == pytest.approx(56.0 * 100 / i28)
    assert t["status"].tolist() == ["final", "final", "projected", "projected"]
    assert "constant FY2025 dollars" in conv.method_note()[0]
    const = budget.with_values(pd.Series(t["constant"].to_numpy(), index=out_years))
    back = to_then_year([const], ix, "FY2025").table
    assert back["then_year"].to_numpy() == pytest.approx([50.0, 52.0, 54.0, 56.0])
