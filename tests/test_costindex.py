"""Own cost index from component indexes and weights, checked against published sources."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from test_indexnum import ILO_CHAINED, ILO_FIXED, ILO_PRICES, ILO_QUANTITIES

from pipeline.costindex import blend, make_weights, weights_from_long, weights_from_series
from pipeline.errors import RealbasisError
from pipeline.model import ANNUAL, MONTHLY, Frequency, Series

P = np.array(ILO_PRICES)
Q = np.array(ILO_QUANTITIES)
E = P * Q
YEARS = pd.period_range("2020", periods=5, freq="Y")


def ilo_components():
    # The 6 items of the ILO/IMF CPI Manual 2004 ch. 19 artificial data set, each as a
    # component index (price relative to period 1), on annual periods.
    return [Series(f"item{i + 1}", pd.Series(P[:, i] / P[0, i] * 100, index=YEARS), ANNUAL,
                   kind="index") for i in range(6)]


def weights_frame(rows):
    return pd.DataFrame(rows, index=YEARS, columns=[f"item{i + 1}" for i in range(6)])


def test_fixed_weights_with_base_shares_is_fixed_base_laspeyres():
    # Base-period expenditure shares times price relatives = Laspeyres (ILO/IMF CPI Manual
    # 2004, ch. 15, eq. 15.8 in share form); expected values from ch. 19 (table 19.3).
    w = make_weights(weights_frame(E))  # spending amounts each year
    res = blend(ilo_components(), w)
    assert w.given_as == "amounts" and any(p.code == "WS108" for p in res.warnings)
    assert res.values["fixed"].to_numpy()[1:] / 100 == pytest.approx(ILO_FIXED["laspeyres"], abs=6e-5)


def test_chained_tornqvist_with_own_year_shares_matches_manual():
    # Chained Törnqvist with each period's expenditure shares, adjacent shares averaged:
    # ILO/IMF CPI Manual 2004 ch. 19 (table 19.6, chained Törnqvist).
    w = make_weights(weights_frame(E / E.sum(axis=1, keepdims=True)))
    assert w.given_as == "shares"
    res = blend(ilo_components(), w)
    assert res.values["tornqvist"].to_numpy()[1:] / 100 == pytest.approx(ILO_CHAINED["tornqvist"], abs=6e-5)
    # Gap of fixed-weight over chained Törnqvist, percentage points a year: average annual
    # growth over the 4 years, from the published levels 1.4400 and 1.2224 (ch. 19).
    expected_gap = (1.44 ** 0.25 - 1.2224 ** 0.25) * 100
    assert res.gap_pp["tornqvist"] == pytest.approx(expected_gap, abs=2e-3)
    gaps = res.gap_table()
    # year-2 growth: Laspeyres 42.00 % vs Törnqvist 40.52 % (ch. 19 values)
    assert gaps.loc[0, "gap_vs_tornqvist_pp"] == pytest.approx(42.00 - 40.52, abs=0.01)


def test_annual_chain_with_previous_year_shares_is_chained_laspeyres():
    # An annual chain whose year-t weights are the shares of year t-1 is the chained
    # Laspeyres index (ILO/IMF CPI Manual 2004, ch. 15, paras 15.76-15.97 on chain
    # indices; expected values ch. 19, table 19.4).
    prev = np.vstack([E[0], E[:-1]])
    res = blend(ilo_components(), make_weights(weights_frame(prev)), methods=["annual-chain"])
    assert res.values["annual-chain"].to_numpy()[1:] / 100 == pytest.approx(ILO_CHAINED["laspeyres"], abs=6e-5)


def monthly_components(months=36, start="2022-01"):
    idx = pd.period_range(start, periods=months, freq="M")
    t = np.arange(months)
    a = 100 * 1.004 ** t
    b = 100 * 1.001 ** t * (1 + 0.02 * np.sin(t / 3))
    return [Series("Goods", pd.Series(a, index=idx), MONTHLY, kind="index"),
            Series("Wages", pd.Series(b, index=idx), MONTHLY, kind="index")], a, b


def test_monthly_annual_chain_hand_computed():
    # Annual chain-linking with a one-month (December) overlap, as described in the
    # ILO/IMF CPI Manual 2004, ch. 9, paras 9.93-9.97 (linking at an overlap month);
    # values computed here by hand.
    comps, a, b = monthly_components()
    yrs = pd.period_range("2022", periods=3, freq="Y")
    w = make_weights(pd.DataFrame({"Goods": [0.6, 0.5, 0.3], "Wages": [0.4, 0.5, 0.7]},
                                  index=yrs), weights_as="shares")
    res = blend(comps, w)
    chain = res.values["annual-chain"].to_numpy() / 100
    dec22 = 0.6 * a[11] / a[0] + 0.4 * b[11] / b[0]
    assert chain[11] == pytest.approx(dec22)
    mar23 = dec22 * (0.5 * a[14] / a[11] + 0.5 * b[14] / b[11])
    assert chain[14] == pytest.approx(mar23)
    # Törnqvist link Dec 2022 -> Jan 2023 averages the two years' shares.
    torn = res.values["tornqvist"].to_numpy()
    link = np.exp(0.55 * np.log(a[12] / a[11]) + 0.45 * np.log(b[12] / b[11]))
    assert torn[12] / torn[11] == pytest.approx(link)
    fixed = res.values["fixed"].to_numpy() / 100
    assert fixed[30] == pytest.approx(0.6 * a[30] / a[0] + 0.4 * b[30] / b[0])
    assert res.reference == "2022-01" and res.values.iloc[0].tolist() == [100.0] * 3


def test_annual_overlap_link_makes_first_year_average_100():
    # Annual-overlap chain-linking: the reference year averages 100 and each year is
    # linked at the previous year's average (IMF Quarterly National Accounts Manual 2017,
    # ch. 8, annual overlap technique).
    comps, a, b = monthly_components()
    yrs = pd.period_range("2022", periods=3, freq="Y")
    w = make_weights(pd.DataFrame({"Goods": [60.0, 50, 30], "Wages": [40.0, 50, 70]}, index=yrs))
    res = blend(comps, w, link="annual")
    assert res.reference == "2022"
    v = res.values
    assert v.iloc[:12].mean().to_numpy() == pytest.approx([100.0] * 3)
    # year 2023 in prices of the 2022 average, linked at the 2022 average level
    lvl22 = v["annual-chain"].iloc[:12].mean() / 100
    expected = lvl22 * (0.5 * a[15] / a[:12].mean() + 0.5 * b[15] / b[:12].mean())
    assert v["annual-chain"].iloc[15] / 100 == pytest.approx(expected)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.floats(0.5, 2.0), min_size=5, max_size=5),
       st.lists(st.floats(0.01, 10), min_size=6, max_size=6))
def test_identical_components_give_that_index_under_every_method(path, w):
    # Proportionality: when all components move alike, any weighted average of them moves
    # alike (ILO/IMF CPI Manual 2004, ch. 16, identity/proportionality tests).
    idx = pd.period_range("2020", periods=5, freq="Y")
    vals = np.array(path) * 100
    comps = [Series(n, pd.Series(vals * k, index=idx), ANNUAL, kind="index")
             for k, n in zip((1, 2, 3), "abc", strict=True)]
    changing = np.array([w[:3], w[1:4], w[2:5], w[3:6], w[:3]])  # weights differ by year
    weights = make_weights(pd.DataFrame(changing, index=idx, columns=list("abc")))
    res = blend(comps, weights)
    for m in ("fixed", "annual-chain", "tornqvist"):
        assert res.values[m].to_numpy() == pytest.approx(vals / vals[0] * 100, rel=1e-10)
        assert res.gap_pp.get(m, 0.0) == pytest.approx(0.0, abs=1e-9)


def test_status_of_blend_is_worst_component_status():
    # A figure resting on a preliminary value is preliminary (DESIGN.md; common practice).
    comps, _, _ = monthly_components(24)
    st_ = pd.Series("final", index=comps[0].index, dtype=object)
    st_.iloc[-2:] = "preliminary"
    comps[1] = comps[1].with_values(comps[1].values, status=st_)
    yrs = pd.period_range("2022", periods=2, freq="Y")
    w = make_weights(pd.DataFrame({"Goods": [1.0, 1.0], "Wages": [1.0, 2.0]}, index=yrs))
    res = blend(comps, w)
    assert res.status.iloc[-2:].tolist() == ["preliminary"] * 2
    assert res.status.iloc[0] == "final"
    s = res.series("tornqvist")
    assert s.kind == "index" and s.stretches()["preliminary"] == ("2023-11", "2023-12")


def test_weights_from_long_table_and_series_fiscal_years():
    frame = pd.DataFrame({"year": ["FY2023", "FY2023", "FY2024", "FY2024"],
                          "component": ["Goods", "Wages"] * 2,
                          "weight": [30, 70, 40, 60]})
    w = weights_from_long(frame, fy_start=7)
    assert w.year_frequency == Frequency("FY", 7)
    assert w.labels() == ["FY2023", "FY2024"]
    assert w.shares.loc[pd.Period("2024", "Y-JUN"), "Goods"] == pytest.approx(0.4)
    comps, a, b = monthly_components(24, start="2022-07")
    res = blend(comps, w)
    # July 2023 starts FY2024: its Törnqvist link averages FY2023 and FY2024 shares.
    t = res.values["tornqvist"].to_numpy()
    link = np.exp(0.35 * np.log(a[12] / a[11]) + 0.65 * np.log(b[12] / b[11]))
    assert t[12] / t[11] == pytest.approx(link)
    ser = [Series(n, pd.Series([1.0, 3.0], index=pd.period_range("2022", periods=2, freq="Y")),
                  ANNUAL, kind="flow") for n in ("Goods", "Wages")]
    assert weights_from_series(ser).shares.iloc[1].tolist() == pytest.approx([0.5, 0.5])


def test_coded_errors():
    comps, _, _ = monthly_components(24)
    yrs = pd.period_range("2022", periods=2, freq="Y")
    with pytest.raises(RealbasisError) as e:
        blend(comps, make_weights(pd.DataFrame({"Goods": [1.0, 1.0]}, index=yrs)))
    assert e.value.code == "WS101" and "Wages" in str(e.value)
    with pytest.raises(RealbasisError) as e:
        blend(comps, make_weights(pd.DataFrame({"Goods": [1.0, 1], "Wages": [1.0, 1],
                                                "Rent": [1.0, 1]}, index=yrs)))
    assert e.value.code == "WS101" and "Rent" in str(e.value)
    with pytest.raises(RealbasisError) as e:
        make_weights(pd.DataFrame({"Goods": [1.0, -1], "Wages": [1.0, 1]}, index=yrs))
    assert e.value.code == "WS102"
    with pytest.raises(RealbasisError) as e:
        make_weights(pd.DataFrame({"Goods": [1.0, np.nan], "Wages": [1.0, 1]}, index=yrs))
    assert e.value.code == "WS101"
    with pytest.raises(RealbasisError) as e:
        make_weights(pd.DataFrame({"Goods": [0.5, 0.5], "Wages": [0.2, 0.5]}, index=yrs),
                     weights_as="shares")
    assert e.value.code == "WS104"
    only22 = make_weights(pd.DataFrame({"Goods": [1.0], "Wages": [1.0]}, index=yrs[:1]))
    with pytest.raises(RealbasisError) as e:
        blend(comps, only22, methods=["annual-chain"])
    assert e.value.code == "WS103" and "2023" in str(e.value)
    # one set of weights is enough for the fixed-weight version
    assert blend(comps, only22).methods == ("fixed",)
    with pytest.raises(RealbasisError) as e:
        blend(comps, only22, methods=["laspeyres-ish"])
    assert e.value.code == "WS106"
    bad = pd.DataFrame({"year": ["2022", "2022"], "component": ["Goods", "Wages"],
                        "weight": ["1", "lots"]})
    with pytest.raises(RealbasisError) as e:
        weights_from_long(bad, source="w.csv")
    assert e.value.code == "WS102" and e.value.problems[0].where.row == 3


def test_recipe_round_trip_is_json_safe():
    # Workspace.own_indexes holds JSON-safe recipes (pipeline.model.Workspace).
    import json

    from pipeline.costindex import blend_recipe

    comps, _, _ = monthly_components()
    yrs = pd.period_range("2022", periods=3, freq="Y")
    w = make_weights(pd.DataFrame({"Goods": [60.0, 50, 30], "Wages": [40.0, 50, 70]}, index=yrs))
    res = blend(comps, w, link="annual", fixed_year="2023")
    recipe = json.loads(json.dumps(res.recipe()))
    again = blend_recipe(recipe, comps)
    pd.testing.assert_frame_equal(again.values, res.values)
    assert again.fixed_year == pd.Period("2023", "Y")
    assert again.weights.given_as == res.weights.given_as == "shares"  # rows sum to 100
    with pytest.raises(RealbasisError) as e:
        blend_recipe(recipe, comps[:1])
    assert e.value.code == "WS101"
