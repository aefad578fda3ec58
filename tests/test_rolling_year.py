"""Rolling-year (moving-year) index numbers for seasonal items, checked against the
ILO/IMF/OECD/UNECE/World Bank Producer Price Index Manual (2004), ch. 22, worked cases
done by hand, and the proportionality identity."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeline.errors import RealbasisError
from pipeline.indexnum import FORMULAS, compute_rolling_year, price_table

TURVEY = Path("/work/shared/reference/turvey_seasonal_fruit.csv")

# Producer Price Index Manual (2004), ch. 22 "Treatment of seasonal products", Table 22.18
# "Rolling-Year Laspeyres, Paasche, and Fisher Price Indices" on Turvey's artificial
# seasonal fruit data (base year 1970 = 1.0000, the year ending December 1970), read from
# a copy of the manual (not from memory). Columns: L, P, F fixed base; L, P, F chained.
# The chained columns equal the fixed ones through 1971: the years ending in the first
# year after the base are compared with the base directly.
TABLE_22_18 = {
    "1971-01": (1.0082, 1.0087, 1.0085, 1.0082, 1.0087, 1.0085),
    "1971-02": (1.0161, 1.0170, 1.0165, 1.0161, 1.0170, 1.0165),
    "1971-03": (1.0257, 1.0274, 1.0265, 1.0257, 1.0274, 1.0265),
    "1971-04": (1.0344, 1.0364, 1.0354, 1.0344, 1.0364, 1.0354),
    "1971-05": (1.0427, 1.0448, 1.0438, 1.0427, 1.0448, 1.0438),
    "1971-06": (1.0516, 1.0537, 1.0527, 1.0516, 1.0537, 1.0527),
    "1971-07": (1.0617, 1.0635, 1.0626, 1.0617, 1.0635, 1.0626),
    "1971-08": (1.0701, 1.0706, 1.0704, 1.0701, 1.0706, 1.0704),
    "1971-09": (1.0750, 1.0740, 1.0745, 1.0750, 1.0740, 1.0745),
    "1971-10": (1.0818, 1.0792, 1.0805, 1.0818, 1.0792, 1.0805),
    "1971-11": (1.0937, 1.0901, 1.0919, 1.0937, 1.0901, 1.0919),
    "1971-12": (1.1008, 1.0961, 1.0984, 1.1008, 1.0961, 1.0984),
    "1972-01": (1.1082, 1.1035, 1.1058, 1.1081, 1.1040, 1.1061),
    "1972-02": (1.1183, 1.1137, 1.1160, 1.1183, 1.1147, 1.1165),
    "1972-03": (1.1287, 1.1246, 1.1266, 1.1290, 1.1260, 1.1275),
    "1972-04": (1.1362, 1.1324, 1.1343, 1.1366, 1.1342, 1.1354),
    "1972-05": (1.1436, 1.1393, 1.1414, 1.1437, 1.1415, 1.1426),
    "1972-06": (1.1530, 1.1481, 1.1505, 1.1528, 1.1505, 1.1517),
    "1972-07": (1.1645, 1.1595, 1.1620, 1.1644, 1.1622, 1.1633),
    "1972-08": (1.1757, 1.1670, 1.1713, 1.1747, 1.1709, 1.1728),
    "1972-09": (1.1812, 1.1680, 1.1746, 1.1787, 1.1730, 1.1758),
    "1972-10": (1.1881, 1.1712, 1.1796, 1.1845, 1.1771, 1.1808),
    "1972-11": (1.1999, 1.1805, 1.1901, 1.1962, 1.1869, 1.1915),
    "1972-12": (1.2091, 1.1884, 1.1987, 1.2052, 1.1949, 1.2001),
    "1973-01": (1.2184, 1.1971, 1.2077, 1.2143, 1.2047, 1.2095),
    "1973-02": (1.2300, 1.2086, 1.2193, 1.2263, 1.2172, 1.2218),
}


@pytest.fixture(scope="module")
def turvey():
    if not TURVEY.exists():
        pytest.skip("Turvey's seasonal fruit data is not on this machine (reference only)")
    df = pd.read_csv(TURVEY).rename(columns={"commodity": "item"})
    df["period"] = pd.PeriodIndex(df["period"], freq="M")
    return price_table(df, source=TURVEY.name)


@pytest.mark.parametrize("chained", [False, True])
@pytest.mark.parametrize("k,formula", [(0, "laspeyres"), (1, "paasche"), (2, "fisher")])
def test_turvey_rolling_year_matches_ppi_manual_table_22_18(turvey, chained, k, formula):
    # PPI Manual 2004, Table 22.18 (see TABLE_22_18), printed to four decimals.
    res = compute_rolling_year(turvey, formula, chained=chained, base="1970")
    got = (res.values / 100).rename(index=lambda p: str(p))
    col = k + (3 if chained else 0)
    expected = pd.Series({p: v[col] for p, v in TABLE_22_18.items()})
    assert got.loc[expected.index].to_numpy() == pytest.approx(expected.to_numpy(), abs=6e-5)
    assert got.iloc[0] == 1.0 and res.labels()[0] == "1970-12"
    # 3 fruits in 12 months + peaches in 5 + strawberries in 3 = 44 (item, month) pairs
    assert int(res.matched.iloc[0]) == 44 and res.rolling_base == "1970"


# ---------------------------------------------------------------------------------------
# A quarterly case worked by hand.
# Heating oil is bought every quarter; ice cream only in Q2 and Q3 (a strongly seasonal
# item). Prices (quantities):
#                 Q1         Q2         Q3         Q4
#   2020 oil   10 (4)     10 (2)     10 (1)     10 (3)     ice    -     5 (6)    5 (8)   -
#   2021 oil   11 (4)     11 (2)     12 (1)     12 (3)     ice    -     6 (5)    5 (8)   -
#   2022 oil   12 (4)     13 (2)     13 (1)     13 (3)     ice    -     6 (5)    7 (8)   -
# Each (item, quarter) is its own item: 6 items. Base year 2020; its value at 2020Q4 is 100.
# Base-year expenditure sum(p0 q0) = 40 + 20 + 10 + 30 + 30 + 40 = 170.
# Fixed-base Laspeyres, sum(p_window q0) / 170, the window being the 4 quarters ending in t:
#   2021Q1 {21Q1, 20Q2, 20Q3, 20Q4}: 44 + 20 + 10 + 30 + 30 + 40 = 174 -> 174/170
#   2021Q2 {21Q1, 21Q2, 20Q3, 20Q4}: 44 + 22 + 10 + 30 + 36 + 40 = 182 -> 182/170
#   2021Q3 {.., 21Q3, 20Q4}:         44 + 22 + 12 + 30 + 36 + 40 = 184 -> 184/170
#   2021Q4 {the year 2021}:          44 + 22 + 12 + 36 + 36 + 40 = 190 -> 190/170
#   2022Q2 {22Q1, 22Q2, 21Q3, 21Q4}: 48 + 26 + 12 + 36 + 36 + 40 = 198 -> 198/170
# Chained Laspeyres: windows ending in 2021 are compared with 2020 directly (as above);
# 2022Q2 = value at 2021Q2 x the link from the window ending 2021Q2 to the one ending
# 2022Q2, weighted by the earlier window's quantities (21Q1 oil 4, 21Q2 oil 2, 20Q3 oil 1,
# 20Q4 oil 3, 21Q2 ice 5, 20Q3 ice 8):
#   numerator 12x4 + 13x2 + 12x1 + 12x3 + 6x5 + 5x8 = 192
#   denominator 11x4 + 11x2 + 10x1 + 10x3 + 6x5 + 5x8 = 176
#   2022Q2 = (182/170) x (192/176)
# Jevons (prices only), 2021Q4 against 2020: relatives 1.1, 1.1, 1.2, 1.2 (oil), 1.2, 1.0
# (ice): (1.1^2 x 1.2^3)^(1/6).

OIL = {2020: [10, 10, 10, 10], 2021: [11, 11, 12, 12], 2022: [12, 13, 13, 13]}
OIL_Q = [4, 2, 1, 3]
ICE = {2020: [5, 5], 2021: [6, 5], 2022: [6, 7]}
ICE_Q = {2020: [6, 8], 2021: [5, 8], 2022: [5, 8]}


@pytest.fixture(scope="module")
def seasonal():
    rows = []
    for y in (2020, 2021, 2022):
        for q in range(4):
            per = pd.Period(f"{y}Q{q + 1}", "Q")
            rows.append({"period": per, "item": "heating oil", "price": OIL[y][q],
                         "quantity": OIL_Q[q]})
            if q in (1, 2):
                rows.append({"period": per, "item": "ice cream", "price": ICE[y][q - 1],
                             "quantity": ICE_Q[y][q - 1]})
    return price_table(pd.DataFrame(rows))


def test_hand_worked_quarterly_rolling_year(seasonal):
    fixed = compute_rolling_year(seasonal, "laspeyres", base="2020")
    v = fixed.values.rename(index=str)
    assert v["2020Q4"] == 100.0
    assert v[["2021Q1", "2021Q2", "2021Q3", "2021Q4"]].to_numpy() == pytest.approx(
        [100 * 174 / 170, 100 * 182 / 170, 100 * 184 / 170, 100 * 190 / 170], rel=1e-12)
    assert v["2022Q2"] == pytest.approx(100 * 198 / 170, rel=1e-12)
    assert fixed.matched.tolist() == [6] * len(v)  # 4 oil quarters + 2 ice-cream quarters
    chained = compute_rolling_year(seasonal, "laspeyres", base="2020", chained=True)
    c = chained.values.rename(index=str)
    assert c[["2021Q1", "2021Q4"]].to_numpy() == pytest.approx(
        v[["2021Q1", "2021Q4"]].to_numpy(), rel=1e-14)  # the first year: directly
    assert c["2022Q2"] == pytest.approx(100 * (182 / 170) * (192 / 176), rel=1e-12)
    jevons = compute_rolling_year(seasonal, "jevons", base="2020")
    assert jevons.values.rename(index=str)["2021Q4"] == pytest.approx(
        100 * (1.1 ** 2 * 1.2 ** 3) ** (1 / 6), rel=1e-12)
    assert "rolling-year" in chained.name and "base year 2020" in chained.method_note()[0]


# ---------------------------------------------------------------------------------------
# Proportionality: when every price moves by the same factor, every formula returns it
# (ILO/IMF CPI Manual 2004, ch. 16, the proportionality test; for the rolling year each
# full year of (item, month) prices is the base year's times that year's factor).

price = st.floats(min_value=0.5, max_value=50.0, allow_nan=False)
qty = st.floats(min_value=0.1, max_value=100.0, allow_nan=False)


@settings(max_examples=40, deadline=None)
@given(data=st.data(), items=st.integers(min_value=1, max_value=4),
       factors=st.lists(st.floats(min_value=0.5, max_value=2.0), min_size=2, max_size=3))
def test_every_formula_returns_the_common_price_factor(data, items, factors):
    lam = [1.0, *factors]
    rows = []
    base_p = data.draw(st.lists(st.lists(price, min_size=12, max_size=12), min_size=items,
                                max_size=items))
    for y, f in enumerate(lam):
        for m in range(12):
            for i in range(items):
                rows.append({"period": pd.Period(f"{2020 + y}-{m + 1:02d}", "M"),
                             "item": f"item{i}", "price": base_p[i][m] * f,
                             "quantity": data.draw(qty)})
    table = price_table(pd.DataFrame(rows))
    for formula in FORMULAS:
        for chained in (False, True):
            if chained and formula in ("lowe", "young"):
                continue
            res = compute_rolling_year(table, formula, chained=chained, base="2020")
            year_end = res.values.rename(index=str)[[f"{2020 + y}-12" for y in range(len(lam))]]
            assert year_end.to_numpy() == pytest.approx(100 * np.asarray(lam), rel=1e-9)


def test_rolling_year_errors_are_coded(seasonal):
    annual = price_table(pd.DataFrame({
        "period": [pd.Period("2020", "Y"), pd.Period("2021", "Y")], "item": ["a", "a"],
        "price": [1.0, 1.1], "quantity": [1.0, 1.0]}))
    with pytest.raises(RealbasisError) as e:
        compute_rolling_year(annual, "laspeyres")
    assert e.value.code == "WS010"
    with pytest.raises(RealbasisError) as e:
        compute_rolling_year(seasonal, "laspeyres", base="2020Q1..2020Q2")
    assert e.value.code == "WS011"
    with pytest.raises(RealbasisError) as e:
        compute_rolling_year(seasonal, "laspeyres", base="2030")
    assert e.value.code == "WS005"
    with pytest.raises(RealbasisError) as e:
        compute_rolling_year(seasonal, "lowe", chained=True)
    assert e.value.code == "WS004" and e.value.problems[0].remedy == "chained"
    # a fiscal base year (July-June) works on monthly prices
    rows = [{"period": pd.Period("2020-01", "M") + t, "item": "a", "price": 1 + 0.01 * t,
             "quantity": 1.0} for t in range(30)]
    fy = compute_rolling_year(price_table(pd.DataFrame(rows)), "laspeyres", base="FY2021",
                              fy_start=7)
    assert fy.rolling_base == "FY2021" and fy.values.rename(index=str)["2021-06"] == 100.0


def test_windows_gathered_in_chunks_give_the_same_numbers(seasonal, monkeypatch):
    # Memory is bounded by gathering a few windows at a time; the numbers must not change
    # (plumbing check against the unchunked run).
    import pipeline.indexnum as indexnum

    whole = {c: compute_rolling_year(seasonal, "fisher", chained=c, base="2020")
             for c in (False, True)}
    monkeypatch.setattr(indexnum, "_ROLLING_CELLS", 10)  # 8 cells a window: one at a time
    for c, res in whole.items():
        part = compute_rolling_year(seasonal, "fisher", chained=c, base="2020")
        assert part.values.to_numpy() == pytest.approx(res.values.to_numpy(), rel=1e-15)
        assert part.matched.tolist() == res.matched.tolist()
        assert part.dropped.tolist() == res.dropped.tolist()
