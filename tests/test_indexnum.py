"""Index numbers from prices and quantities, checked against published sources."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeline.errors import RealbasisError
from pipeline.indexnum import chain_links, compute_index, price_table

# ILO/IMF Consumer Price Index Manual (2004) and Producer Price Index Manual (2004),
# chapter 19 "Price indices using an artificial data set", tables 19.1 (prices) and 19.2
# (quantities): 6 items over 5 periods.
ILO_PRICES = [
    [1.0, 1.0, 1.0, 1.0, 1.0, 1.0],
    [1.2, 3.0, 1.3, 0.7, 1.4, 0.8],
    [1.0, 1.0, 1.5, 0.5, 1.7, 0.6],
    [0.8, 0.5, 1.6, 0.3, 1.9, 0.4],
    [1.0, 1.0, 1.6, 0.1, 2.0, 0.2],
]
ILO_QUANTITIES = [
    [1.0, 1.0, 2.0, 1.0, 4.5, 0.5],
    [0.8, 0.9, 1.9, 1.3, 4.7, 0.6],
    [1.0, 1.1, 1.8, 3.0, 5.0, 0.8],
    [1.2, 1.2, 1.9, 6.0, 5.6, 1.3],
    [0.9, 1.2, 2.0, 12.0, 6.5, 2.5],
]
# Expected values for periods 2-5, period 1 = 1. Source: ILO/IMF CPI Manual 2004, ch. 19,
# tables 19.3 (fixed-base Laspeyres, Paasche, Fisher), 19.4 (chained L/P/F), 19.5-19.6
# (Törnqvist, Walsh); recomputed exactly from the inputs above, and from memory the
# values the manual prints (4 decimals).
ILO_FIXED = {
    "laspeyres": [1.4200, 1.3450, 1.3550, 1.4400],
    "paasche": [1.3824, 1.2031, 1.0209, 0.7968],
    "fisher": [1.4011, 1.2721, 1.1762, 1.0712],
    "tornqvist": [1.4052, 1.2890, 1.2268, 1.2477],
    "walsh": [1.4017, 1.2850, 1.2193, 1.1850],
}
ILO_CHAINED = {
    "laspeyres": [1.4200, 1.3646, 1.3351, 1.3306],
    "paasche": [1.3824, 1.2740, 1.2060, 1.1234],
    "fisher": [1.4011, 1.3185, 1.2689, 1.2226],
    "tornqvist": [1.4052, 1.3112, 1.2624, 1.2224],
}


def long_table(prices, quantities, *, start="2024-01", kind="quantity"):
    periods = pd.period_range(start, periods=len(prices), freq="M")
    rows = []
    for t, per in enumerate(periods):
        for i, p in enumerate(prices[t]):
            q = quantities[t][i] if quantities is not None else None
            row = {"period": per, "item": f"item{i + 1}", "price": p}
            if quantities is not None:
                row[kind] = q if kind == "quantity" else p * q
            rows.append(row)
    return pd.DataFrame(rows)


@pytest.fixture(scope="module")
def ilo():
    return price_table(long_table(ILO_PRICES, ILO_QUANTITIES))


@pytest.mark.parametrize("formula", sorted(ILO_FIXED))
def test_ilo_chapter19_fixed_base(ilo, formula):
    # Source: ILO/IMF CPI Manual 2004, ch. 19 (see ILO_FIXED).
    res = compute_index(ilo, formula)
    got = res.values.to_numpy() / 100
    assert got[0] == pytest.approx(1.0)
    assert got[1:] == pytest.approx(ILO_FIXED[formula], abs=6e-5)
    assert list(res.matched) == [6] * 5 and list(res.dropped) == [0] * 5


@pytest.mark.parametrize("formula", sorted(ILO_CHAINED))
def test_ilo_chapter19_chained(ilo, formula):
    # Source: ILO/IMF CPI Manual 2004, ch. 19 (see ILO_CHAINED).
    res = compute_index(ilo, formula, chained=True)
    assert res.values.to_numpy()[1:] / 100 == pytest.approx(ILO_CHAINED[formula], abs=6e-5)
    assert res.chained and res.links is not None


def test_ilo_expenditures_give_the_same_answer(ilo):
    # Expenditure = price x quantity, so an expenditure table is the same information
    # (ILO/IMF CPI Manual 2004, ch. 19 inputs; common practice).
    tab = price_table(long_table(ILO_PRICES, ILO_QUANTITIES, kind="expenditure"))
    for f in ("laspeyres", "paasche", "fisher", "tornqvist", "walsh"):
        a = compute_index(tab, f, chained=True).values.to_numpy()
        b = compute_index(ilo, f, chained=True).values.to_numpy()
        assert a == pytest.approx(b, rel=1e-12)


def test_lowe_and_young_reduce_to_laspeyres_when_weight_period_is_base(ilo):
    # With weights from the price-reference period, Lowe and Young both equal Laspeyres
    # (ILO/IMF CPI Manual 2004, ch. 15, paras 15.18-15.25 on the Lowe and Young indices).
    las = compute_index(ilo, "laspeyres").values.to_numpy()
    assert compute_index(ilo, "lowe").values.to_numpy() == pytest.approx(las)
    assert compute_index(ilo, "young").values.to_numpy() == pytest.approx(las)


def test_lowe_with_later_weight_period_hand_computed(ilo):
    # Lowe index with quantities of period 3 (ILO/IMF CPI Manual 2004, ch. 15 eq. 15.15:
    # sum(p_t q_b)/sum(p_0 q_b)), computed by hand for period 2:
    # q3 = 1.0 1.1 1.8 3.0 5.0 0.8; sum(p2 q3) = 1.2+3.3+2.34+2.1+7.0+0.64 = 16.58;
    # sum(p1 q3) = 12.7 -> 1.305512
    res = compute_index(ilo, "lowe", weight_period="2024-03")
    assert res.values.iloc[1] / 100 == pytest.approx(16.58 / 12.7, rel=1e-12)
    # Young with period-3 expenditure shares: sum(s_b p_t/p_0); by hand for period 2:
    # expenditures at period 3 = 1.0 1.1 2.7 1.5 8.5 0.48 (total 15.28)
    e = np.array([1.0, 1.1, 2.7, 1.5, 8.5, 0.48])
    rel = np.array(ILO_PRICES[1])
    res_y = compute_index(ilo, "young", weight_period="2024-03")
    assert res_y.values.iloc[1] / 100 == pytest.approx((e / e.sum() * rel).sum(), rel=1e-12)


def test_jevons_is_geometric_mean_of_relatives(ilo):
    # Jevons = unweighted geometric mean of price relatives (ILO/IMF CPI Manual 2004,
    # ch. 20, eq. 20.3).
    res = compute_index(ilo, "jevons")
    exp = np.exp(np.log(np.array(ILO_PRICES[3])).mean())
    assert res.values.iloc[3] / 100 == pytest.approx(exp)


def test_qna_2017_example_8_8_chain_quarterly_fisher_links():
    # IMF Quarterly National Accounts Manual (2017), Example 8.8: quarterly Fisher links
    # (previous quarter = 100) chained into an index; links are printed rounded to two
    # decimals, hence the 0.03 tolerance.
    links = [100.74, 99.92, 100.08, 100.33, 100.18, 100.06, 100.58, 101.07,
             100.76, 100.54, 99.94, 99.83]
    expected = [100.74, 100.66, 100.74, 101.07, 101.25, 101.31, 101.90, 102.99,
                103.77, 104.32, 104.26, 104.08]
    s = pd.Series(links, index=pd.period_range("2011Q1", periods=12, freq="Q"))
    chained = chain_links(s)
    assert chained.index[0] == pd.Period("2010Q4", "Q")
    assert chained.to_numpy()[1:] == pytest.approx(expected, abs=0.03)
    annual = chained.iloc[1:].groupby(chained.index[1:].year).mean()
    # Annual averages printed in the example: 100.80 101.86 104.11.
    assert annual.to_numpy() == pytest.approx([100.80, 101.86, 104.11], abs=0.03)


def test_matched_items_and_dropped_counts():
    # Matched-model comparisons use only items present in both periods (ILO/IMF CPI
    # Manual 2004, ch. 7 on missing items; common practice).
    df = long_table(ILO_PRICES[:3], ILO_QUANTITIES[:3])
    df = df[~((df["item"] == "item2") & (df["period"] == pd.Period("2024-02", "M")))]
    df = df[~((df["item"] == "item6") & (df["period"] == pd.Period("2024-03", "M")))]
    tab = price_table(df)
    fixed = compute_index(tab, "laspeyres")
    assert list(fixed.matched) == [6, 5, 5]
    assert list(fixed.dropped) == [0, 1, 1]
    # period 2 vs 1 without item 2: hand-computed Laspeyres on items 1,3,4,5,6
    p0, p1, q0 = (np.array(x)[[0, 2, 3, 4, 5]] for x in
                  (ILO_PRICES[0], ILO_PRICES[1], ILO_QUANTITIES[0]))
    assert fixed.values.iloc[1] / 100 == pytest.approx((p1 * q0).sum() / (p0 * q0).sum())
    chained = compute_index(tab, "fisher", chained=True)
    # link 2->3: item 2 missing in period 2, item 6 missing in period 3 -> 4 matched
    assert list(chained.matched) == [6, 5, 4]
    assert list(chained.dropped) == [0, 1, 2]
    assert any(w.code == "WS008" for w in chained.warnings)


def test_base_period_other_than_first(ilo):
    # Rebasing a chained index: I'(t) = 100 I(t)/I(b) (common practice).
    res = compute_index(ilo, "tornqvist", chained=True, base="2024-03")
    assert res.values.iloc[2] == pytest.approx(100.0)
    assert res.values.iloc[4] / 100 == pytest.approx(1.2224 / 1.3112, abs=1e-4)
    table = res.table()
    assert list(table.columns) == ["period", "index", "matched_items", "dropped_items"]
    assert table["period"].tolist()[0] == "2024-01"


def test_errors_are_coded(ilo):
    with pytest.raises(RealbasisError) as e:
        compute_index(ilo, "carli-ish")
    assert e.value.code == "WS004"
    with pytest.raises(RealbasisError) as e:
        compute_index(ilo, "fisher", base="2030-01")
    assert e.value.code == "WS005"
    with pytest.raises(RealbasisError) as e:
        compute_index(ilo, "lowe", chained=True)
    assert e.value.code == "WS004"
    df = long_table(ILO_PRICES, ILO_QUANTITIES)
    bad = df.copy()
    bad.loc[3, "price"] = -1.0
    with pytest.raises(RealbasisError) as e:
        price_table(bad, source="p.csv")
    assert e.value.code == "WS002" and e.value.problems[0].where.row == 5
    dup = pd.concat([df, df.iloc[[0]]], ignore_index=True)
    with pytest.raises(RealbasisError) as e:
        price_table(dup)
    assert e.value.code == "WS003"
    with pytest.raises(RealbasisError) as e:
        price_table(df.drop(columns=["item"]))
    assert e.value.code == "WS001"
    prices_only = price_table(df.drop(columns=["quantity"]))
    with pytest.raises(RealbasisError) as e:
        compute_index(prices_only, "fisher")
    assert e.value.code == "WS004"
    assert compute_index(prices_only, "jevons").values.iloc[0] == 100.0


def test_chain_broken_by_empty_period_is_an_error():
    df = long_table(ILO_PRICES, ILO_QUANTITIES)
    df = df[df["period"] != pd.Period("2024-03", "M")]  # a whole month missing
    tab = price_table(df)
    assert len(tab.periods) == 5  # the gap stays visible
    with pytest.raises(RealbasisError) as e:
        compute_index(tab, "fisher", chained=True)
    assert e.value.code == "WS006"
    fixed = compute_index(tab, "fisher")
    assert math.isnan(fixed.values.iloc[2])
    assert any(w.code == "WS007" for w in fixed.warnings)


# --- properties (hypothesis) -------------------------------------------------------------

positive = st.floats(min_value=0.05, max_value=20, allow_nan=False, allow_infinity=False)


@st.composite
def two_period_tables(draw, periods=2):
    n = draw(st.integers(min_value=1, max_value=8))
    prices = [[draw(positive) for _ in range(n)] for _ in range(periods)]
    quantities = [[draw(positive) for _ in range(n)] for _ in range(periods)]
    return prices, quantities


@settings(max_examples=60, deadline=None)
@given(two_period_tables(periods=3))
def test_fisher_is_geometric_mean_of_laspeyres_and_paasche(data):
    # Definition of the Fisher ideal index (ILO/IMF CPI Manual 2004, ch. 15, eq. 15.12).
    tab = price_table(long_table(*data))
    las = compute_index(tab, "laspeyres").values.to_numpy()
    paa = compute_index(tab, "paasche").values.to_numpy()
    fis = compute_index(tab, "fisher").values.to_numpy()
    assert fis == pytest.approx(np.sqrt(las * paa), rel=1e-10)


@settings(max_examples=60, deadline=None)
@given(two_period_tables())
def test_fisher_and_tornqvist_pass_time_reversal(data):
    # Time-reversal test T4: P(p0,p1,q0,q1) x P(p1,p0,q1,q0) = 1; Fisher and Törnqvist
    # pass it (ILO/IMF CPI Manual 2004, ch. 16, para 16.32 and ch. 17).
    prices, quantities = data
    fwd = price_table(long_table(prices, quantities))
    back = price_table(long_table(prices[::-1], quantities[::-1]))
    for f in ("fisher", "tornqvist", "walsh"):
        a = compute_index(fwd, f).values.iloc[1] / 100
        b = compute_index(back, f).values.iloc[1] / 100
        assert a * b == pytest.approx(1.0, rel=1e-10)


@settings(max_examples=60, deadline=None)
@given(two_period_tables())
def test_chained_equals_fixed_base_over_two_periods(data):
    # With only one link, chaining changes nothing (ILO/IMF CPI Manual 2004, ch. 15,
    # para 15.86 on chain indices; common practice).
    tab = price_table(long_table(*data))
    for f in ("laspeyres", "paasche", "fisher", "tornqvist", "walsh", "jevons"):
        a = compute_index(tab, f).values.to_numpy()
        b = compute_index(tab, f, chained=True).values.to_numpy()
        assert a == pytest.approx(b, rel=1e-12)


@settings(max_examples=60, deadline=None)
@given(two_period_tables(), st.floats(min_value=0.2, max_value=5))
def test_proportional_prices_give_the_proportion(data, lam):
    # Proportionality test: p1 = lambda p0 gives P = lambda for every formula
    # (ILO/IMF CPI Manual 2004, ch. 16, test T5 / identity tests).
    prices, quantities = data
    prices = [prices[0], [lam * p for p in prices[0]]]
    tab = price_table(long_table(prices, quantities))
    for f in ("laspeyres", "paasche", "fisher", "tornqvist", "walsh", "jevons", "lowe", "young"):
        assert compute_index(tab, f).values.iloc[1] / 100 == pytest.approx(lam, rel=1e-10)
        if f not in ("lowe", "young"):
            res = compute_index(tab, f, chained=True).values.iloc[1]
            assert res / 100 == pytest.approx(lam, rel=1e-10)


def test_read_prices_from_xlsx_and_decimal_comma_csv(tmp_path):
    # Files go through the intake reader (workbooks, semicolons, decimal commas) and give
    # the same ILO/IMF CPI Manual 2004 ch. 19 chained Fisher values.
    from pipeline.indexnum import read_prices

    df = long_table(ILO_PRICES, ILO_QUANTITIES)
    df["period"] = df["period"].astype(str)
    xlsx = tmp_path / "prices.xlsx"
    df.to_excel(xlsx, index=False, sheet_name="Prices")
    semi = tmp_path / "prices.csv"
    text = df.rename(columns=str.title).to_csv(sep=";", index=False)
    semi.write_text(text.replace(".", ","))
    for path in (xlsx, semi):
        res = compute_index(read_prices(path), "fisher", chained=True)
        assert res.values.to_numpy()[1:] / 100 == pytest.approx(ILO_CHAINED["fisher"], abs=6e-5)
    bad = tmp_path / "bad.csv"
    bad.write_text("period,item,price,quantity\n2024-01,a,1,1\nsoon,a,2,1\n")
    with pytest.raises(RealbasisError) as e:
        read_prices(bad)
    assert e.value.code == "WS002" and e.value.problems[0].where.row == 3
