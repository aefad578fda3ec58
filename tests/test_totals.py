"""Totals of separately deflated parts and contributions to real growth (pipeline.totals).

Sources for what is checked here (named again beside each check):
* ILO/IMF Consumer Price Index Manual (2004), ch. 19 "Price indices using an artificial
  data set": 6 items x 5 periods of prices (table 19.1) and quantities (table 19.2), and
  the chained Fisher price index it prints (table 19.4). The inputs are the ones already
  in tests/test_indexnum.py. Each item's value p x q deflated by its own price (base
  period 1, where every price is 1) gives back its quantity, so the chained Fisher total
  of the deflated items must be V_t / P_Fisher,chained(t).
* BEA's contributions-to-percent-change formula for Fisher indexes (Reinsdorf, Diewert
  and Ehemann 2002, "Additive decompositions for Fisher, Törnqvist and geometric mean
  indexes"): the contributions add up exactly to the Fisher index's change.
* IMF Quarterly National Accounts Manual (2017), ch. 8: annual chain-linking with the
  annual-overlap method gives quarterly series whose annual sums equal the annually
  chain-linked annual estimates; chained parts do not add up (the residual).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_indexnum import ILO_CHAINED, ILO_PRICES, ILO_QUANTITIES, long_table

from pipeline.errors import RealbasisError
from pipeline.indexnum import compute_index, price_table
from pipeline.model import ANNUAL, MONTHLY, QUARTERLY, Frequency, Series
from pipeline.totals import (
    TABLE_COLUMNS,
    additive_total,
    annual_overlap_chain,
    fisher_chain,
    total_of_parts,
    year_groups,
)

P = np.array(ILO_PRICES)
Q = np.array(ILO_QUANTITIES)
V = (P * Q).sum(axis=1)
ILO_MONTHS = pd.period_range("2024-01", periods=5, freq="M")


def ilo_parts(start: str = "2024-01"):
    """Each item's value p x q as a money series, its price x 100 as its own deflator."""
    idx = pd.period_range(start, periods=5, freq="M")
    parts = [Series(f"item{i + 1}", pd.Series(P[:, i] * Q[:, i], index=idx), MONTHLY,
                    unit="USD") for i in range(6)]
    defl = [Series(f"price{i + 1}", pd.Series(100 * P[:, i], index=idx), MONTHLY, kind="index")
            for i in range(6)]
    return parts, defl, {f"item{i + 1}": f"price{i + 1}" for i in range(6)}


# --------------------------------------------------------------------------- ILO ch. 19


def test_ilo_items_deflated_by_their_own_price_give_back_the_quantities():
    # ILO/IMF CPI Manual 2004, ch. 19: value = p x q (tables 19.1, 19.2); deflating by the
    # item's own price with base period 1 (all prices 1) leaves q.
    parts, defl, pairs = ilo_parts()
    res = total_of_parts(parts, defl, pairs, "2024-01", chain="none")
    np.testing.assert_allclose(res.real, Q, rtol=1e-14)
    np.testing.assert_allclose(res.total_real, Q.sum(axis=1), rtol=1e-14)
    assert np.all(res.residual == 0.0)  # additive: the parts add up exactly
    np.testing.assert_allclose(res.total_nominal, V, rtol=1e-14)


def test_ilo_chained_fisher_total_is_value_over_the_published_chained_fisher_index():
    # ILO/IMF CPI Manual 2004, ch. 19, table 19.4: chained Fisher price index, periods 2-5
    # (printed to 4 decimals). Chained Fisher quantity x chained Fisher price = V_t / V_1
    # (factor reversal link by link), so the chained total referenced to period 1 is
    # V_1 x Q(t) = V_t / P_F(t).
    parts, defl, pairs = ilo_parts()
    res = total_of_parts(parts, defl, pairs, "2024-01", chain="fisher")
    implied_price = V / res.total_real
    assert implied_price[0] == pytest.approx(1.0, abs=1e-15)
    assert implied_price[1:] == pytest.approx(ILO_CHAINED["fisher"], abs=6e-5)
    # and exactly the project's chained Fisher index of the same table (itself checked
    # against the manual in tests/test_indexnum.py)
    fisher = compute_index(price_table(long_table(ILO_PRICES, ILO_QUANTITIES)), "fisher",
                           chained=True).values.to_numpy() / 100
    np.testing.assert_allclose(res.total_real, V / fisher, rtol=1e-12)
    # the chained parts do not add up: the residual is shown (0 only in the base period)
    assert res.residual[0] == pytest.approx(0.0, abs=1e-12)
    assert np.all(np.abs(res.residual[1:]) > 1e-3)
    np.testing.assert_allclose(res.real.sum(axis=1) + res.residual, res.total_real,
                               rtol=1e-14)


def test_ilo_fisher_contributions_bea_formula_and_its_laspeyres_paasche_form():
    # BEA / Reinsdorf, Diewert and Ehemann (2002): C_i = (p_i0 + p_i1/P_F)(q_i1 - q_i0) /
    # sum_j (p_j0 + p_j1/P_F) q_j0, adding up to Q_F - 1. Checked against an equivalent
    # form derived here by algebra from that formula: C_i = (Q_F c^L_i + L_Q c^P_i) /
    # (Q_F + L_Q) with the Laspeyres and Paasche contributions c^L_i = p_i0 dq_i / sum p0 q0,
    # c^P_i = p_i1 dq_i / sum p1 q0, and L_Q taken from the project's chained Paasche
    # price index (V_t/V_t-1 over the Paasche price link), ILO/IMF CPI Manual 2004 ch. 19.
    parts, defl, pairs = ilo_parts()
    res = total_of_parts(parts, defl, pairs, "2024-01", chain="fisher")
    got = res.contributions_frame().to_numpy() / 100
    table = price_table(long_table(ILO_PRICES, ILO_QUANTITIES))
    paasche = compute_index(table, "paasche", chained=True).values.to_numpy()
    for t in range(1, 5):
        p0, p1, q0, q1 = P[t - 1], P[t], Q[t - 1], Q[t]
        lq = (V[t] / V[t - 1]) / (paasche[t] / paasche[t - 1])
        qf = res.total_real[t] / res.total_real[t - 1]
        c_l = p0 * (q1 - q0) / (p0 * q0).sum()
        c_p = p1 * (q1 - q0) / (p1 * q0).sum()
        np.testing.assert_allclose(got[t], (qf * c_l + lq * c_p) / (qf + lq), rtol=1e-11,
                                   atol=1e-15)
        assert got[t].sum() == pytest.approx(qf - 1.0, abs=1e-14)


def test_additive_contributions_are_share_weighted_part_growth():
    # Common practice (fixed-base totals): contribution = share of the part in the total
    # of the period before x the part's growth; ILO ch. 19 quantities as the parts.
    parts, defl, pairs = ilo_parts()
    res = total_of_parts(parts, defl, pairs, "2024-01")
    share = Q[:-1] / Q[:-1].sum(axis=1, keepdims=True)
    growth = Q[1:] / Q[:-1] - 1
    np.testing.assert_allclose(res.contributions_frame().to_numpy()[1:] / 100, share * growth,
                               rtol=1e-13)


def test_the_board_pack_table():
    parts, defl, pairs = ilo_parts()
    res = total_of_parts(parts, defl, pairs, "2024-01", chain="fisher")
    t = res.table()
    assert tuple(t.columns) == TABLE_COLUMNS
    assert len(t) == 5 * 8
    assert t["component"].tolist()[:8] == [*pairs, "total", "residual"]
    first = t[t["period"] == "2024-01"]
    assert first["contribution_pp"].isna().all() and first["real_growth_pct"].isna().all()
    lines = t[t["component"].isin(["total", "residual"])]
    assert lines["contribution_pp"].isna().all()
    assert t[t["component"] == "residual"]["real_growth_pct"].isna().all()
    assert (t[t["component"] == "residual"]["nominal"] == 0).all()
    later = t[(t["period"] != "2024-01") & ~t["component"].isin(["total", "residual"])]
    assert later["contribution_pp"].notna().all()
    # real growth of the total, period on period, equals the sum of the contributions
    for period, rows in t[t["period"] != "2024-01"].groupby("period"):
        total = rows[rows["component"] == "total"]["real_growth_pct"].item()
        assert rows["contribution_pp"].sum() == pytest.approx(total, abs=1e-10), period
    assert "status" in res.table(status=True).columns


# --------------------------------------------------------------------------- property


def _random_parts(draw_values, draw_prices, freq: Frequency, start: str):
    t_n, n = draw_values.shape
    idx = pd.period_range(start, periods=t_n, freq=freq.pandas_freq)
    parts = [Series(f"part {j}", pd.Series(draw_values[:, j], index=idx), freq)
             for j in range(n)]
    defl = [Series(f"index {j}", pd.Series(100 * draw_prices[:, j], index=idx), freq,
                   kind="index") for j in range(n)]
    return parts, defl, {f"part {j}": f"index {j}" for j in range(n)}


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(data=st.data(), n=st.integers(1, 5), t_n=st.integers(2, 30),
       chain=st.sampled_from(["none", "fisher", "annual"]),
       quarterly=st.booleans())
def test_contributions_add_up_to_the_total_growth(data, n, t_n, chain, quarterly):
    # Contributions add up exactly to the total's real growth: share-weighted for the
    # additive total (common practice), the BEA formula for chained Fisher (Reinsdorf,
    # Diewert and Ehemann 2002), the annual-overlap split (IMF QNA Manual 2017, ch. 8);
    # the same on the year-on-year and annual bases.
    freq = QUARTERLY if quarterly else MONTHLY
    values = np.array(data.draw(st.lists(st.lists(
        st.floats(1.0, 1000.0, allow_nan=False), min_size=n, max_size=n),
        min_size=t_n, max_size=t_n)))
    prices = np.array(data.draw(st.lists(st.lists(
        st.floats(0.5, 2.0, allow_nan=False), min_size=n, max_size=n),
        min_size=t_n, max_size=t_n)))
    parts, defl, pairs = _random_parts(values, prices, freq, "2020-01")
    base = data.draw(st.integers(0, t_n - 1))
    res = total_of_parts(parts, defl, pairs, freq.label(parts[0].index[base]), chain=chain)
    for basis in ("period", "yoy", "annual"):
        c = res.contributions_frame(basis).to_numpy()
        g = res.growth_frame(basis)["total"].to_numpy()
        ok = ~np.isnan(g)
        assert np.array_equal(ok, ~np.isnan(c).any(axis=1))
        err = np.abs(c[ok].sum(axis=1) - g[ok])
        assert np.all(err <= 1e-10 * np.maximum(1.0, np.abs(g[ok]))), (basis, err.max())
    if chain == "none":
        assert np.all(res.residual == 0)
    # the total in the base period is the nominal total there (chained: by construction)
    assert res.total_real[base] == pytest.approx(res.total_nominal[base] if chain != "none"
                                                 else res.real[base].sum(), rel=1e-12)


def test_chained_fisher_equals_the_sum_when_every_part_has_the_same_deflator():
    # Common practice (index-number theory): with one price for every part, relative
    # prices never move, so the Fisher volume link is the ratio of sums and the residual
    # vanishes. Parts: ILO ch. 19 quantities x a common price path. (Not so for the
    # annual overlap: each part's annual average price is its own unit value, weighted by
    # its own quarters, so annual prices differ across parts even under one deflator,
    # unless the deflator is flat within each year.)
    idx = pd.period_range("2021Q1", periods=5, freq="Q")
    parts = [Series(f"item{i + 1}", pd.Series(Q[:, i] * P[:, 0], index=idx), QUARTERLY)
             for i in range(6)]
    one = Series("common", pd.Series(100 * P[:, 0], index=idx), QUARTERLY, kind="index")
    pairs = {p.name: "common" for p in parts}
    additive = total_of_parts(parts, [one], pairs, "2021Q1")
    res = total_of_parts(parts, [one], pairs, "2021Q1", chain="fisher")
    np.testing.assert_allclose(res.total_real, additive.total_real, rtol=1e-13)
    np.testing.assert_allclose(res.residual, 0.0, atol=1e-12)
    np.testing.assert_allclose(res.contributions_frame().to_numpy()[1:],
                               additive.contributions_frame().to_numpy()[1:], rtol=1e-11)
    flat = one.with_values(pd.Series([100.0, 100, 100, 100, 130], index=idx))
    parts = [s.with_values(pd.Series(Q[:, i] * flat.values.to_numpy() / 100, index=idx))
             for i, s in enumerate(parts)]
    annual = total_of_parts(parts, [flat], pairs, "2021Q1", chain="annual")
    np.testing.assert_allclose(annual.total_real, Q.sum(axis=1), rtol=1e-13)
    np.testing.assert_allclose(annual.residual, 0.0, atol=1e-12)


def _three_year_parts(kind="flow"):
    """ILO ch. 19 prices and quantities extended to 3 years of quarters: period k of the
    manual's data set is quarter k, repeating with a drift (invented extension; what is
    checked are identities of the method, not the values)."""
    rng = np.random.default_rng(3)
    idx = pd.period_range("2021Q1", periods=12, freq="Q")
    p = np.vstack([P, P[::-1], P[1:3]]) * np.linspace(1, 1.3, 12)[:, None]
    q = np.vstack([Q, Q * 1.1, Q[:2] * 1.2]) * rng.uniform(0.95, 1.05, (12, 6))
    parts = [Series(f"item{i + 1}", pd.Series(p[:, i] * q[:, i], index=idx), QUARTERLY,
                    kind=kind) for i in range(6)]
    defl = [Series(f"price{i + 1}", pd.Series(100 * p[:, i], index=idx), QUARTERLY,
                   kind="index") for i in range(6)]
    return parts, defl, {f"item{i + 1}": f"price{i + 1}" for i in range(6)}, p, q


def test_annual_overlap_quarters_add_up_to_the_annual_chain_linked_estimates():
    # IMF QNA Manual 2017, ch. 8 (annual overlap): the quarterly chain-linked estimates
    # sum to the annually chain-linked annual estimates, which are Laspeyres volumes at
    # the previous year's prices, chained: X(y) = X(y-1) x sum pbar_y-1 x_y / V_y-1.
    parts, defl, pairs, p, q = _three_year_parts()
    assert q.shape == (12, 6)
    quarterly = total_of_parts(parts, defl, pairs, "2021", chain="annual")
    annual = total_of_parts(parts, defl, pairs, "2021", chain="annual", to=ANNUAL)
    sums = quarterly.total_real.reshape(3, 4).sum(axis=1)
    np.testing.assert_allclose(sums, annual.total_real, rtol=1e-12)
    # the annual Laspeyres chain by hand, base = reference year 2021 (= nominal 2021)
    vq = (p * q).reshape(3, 4, 6).sum(axis=1)  # annual nominal per item
    real_a = annual.real  # each item's annual real value (sum of quarterly reals)
    pbar = vq / real_a
    by_hand = [vq[0].sum()]
    for y in (1, 2):
        by_hand.append(by_hand[-1] * (pbar[y - 1] * real_a[y]).sum() / vq[y - 1].sum())
    np.testing.assert_allclose(annual.total_real, by_hand, rtol=1e-12)
    # the reference year 2021: the chained total averages to the nominal total there
    assert quarterly.total_real[:4].mean() == pytest.approx(quarterly.total_nominal[:4].mean(),
                                                            rel=1e-12)
    # annual-basis contributions add up to the growth of the annual sums
    c = quarterly.contributions_frame("annual")
    g = quarterly.growth_frame("annual")["total"]
    assert list(c.index) == ["2021", "2022", "2023"]
    np.testing.assert_allclose(c.sum(axis=1).to_numpy()[1:], g.to_numpy()[1:], atol=1e-10)
    assert g.iloc[1] == pytest.approx(100 * (sums[1] / sums[0] - 1), rel=1e-12)


def test_base_range_is_the_reference_year_average():
    # National accounts reference-year convention (BEA chained dollars; IMF QNA Manual
    # 2017, ch. 8): over the reference year the chained total averages to the nominal.
    parts, defl, pairs, _, _ = _three_year_parts()
    res = total_of_parts(parts, defl, pairs, "2022Q1..2022Q4", chain="fisher")
    assert res.total_real[4:8].mean() == pytest.approx(res.total_nominal[4:8].mean(),
                                                       rel=1e-12)
    assert res.dollars_label == "chained 2022Q1..2022Q4 dollars"
    assert any("average of the nominal total" in line for line in res.method_note())


def test_stocks_on_the_annual_basis_use_year_end_values():
    # Point-in-time amounts: a year's value is its last period's (DESIGN.md; common
    # practice for balances).
    parts, defl, pairs, _, _ = _three_year_parts(kind="stock")
    res = total_of_parts(parts, defl, pairs, "2021Q4", chain="fisher")
    ann = res.table("annual")
    tot = ann[ann["component"] == "total"]["real"].to_numpy()
    np.testing.assert_allclose(tot, res.total_real[[3, 7, 11]], rtol=1e-14)


def test_year_on_year_contributions():
    # Multi-period contributions add up the period contributions in the total's units and
    # divide by the total at the start; for the additive total that is the direct
    # share-weighted formula (common practice).
    parts, defl, pairs, _, _ = _three_year_parts()
    res = total_of_parts(parts, defl, pairs, "2021Q1")
    yoy = res.contributions_frame("yoy").to_numpy() / 100
    direct = (res.real[4:] - res.real[:-4]) / res.total_real[:-4, None]
    np.testing.assert_allclose(yoy[4:], direct, rtol=1e-12)
    assert np.isnan(yoy[:4]).all()
    fisher = total_of_parts(parts, defl, pairs, "2021Q1", chain="fisher")
    c = fisher.contributions_frame("yoy").to_numpy()[4:].sum(axis=1)
    g = 100 * (fisher.total_real[4:] / fisher.total_real[:-4] - 1)
    np.testing.assert_allclose(c, g, atol=1e-10)


# --------------------------------------------------------------------------- status


def test_status_is_the_worst_of_what_each_value_rests_on():
    # DEVELOPERS "Status": a value takes the worst status of the values it rests on. A
    # chained level rests on every period between it and the base.
    parts, defl, pairs = ilo_parts()
    st = pd.Series(["final", "final", "preliminary", "final", "final"], index=ILO_MONTHS)
    defl[1] = defl[1].with_values(defl[1].values, status=st)
    add = total_of_parts(parts, defl, pairs, "2024-01")
    assert add.total_status.tolist() == [0, 0, 1, 0, 0]
    chained = total_of_parts(parts, defl, pairs, "2024-01", chain="fisher")
    assert chained.total_status.tolist() == [0, 0, 1, 1, 1]
    assert chained.worst_status == "preliminary"
    assert any(w.code == "DF010" for w in chained.warnings)
    back = total_of_parts(parts, defl, pairs, "2024-05", chain="fisher")
    assert back.total_status.tolist() == [1, 1, 1, 0, 0]
    t = chained.table(status=True)
    assert set(t[t["period"] == "2024-04"]["status"]) == {"final", "preliminary"}


# --------------------------------------------------------------------------- errors


def _code(fn, *args, **kw) -> tuple[str, ...]:
    with pytest.raises(RealbasisError) as info:
        fn(*args, **kw)
    return info.value.codes


def test_coded_errors():
    parts, defl, pairs = ilo_parts()
    assert _code(total_of_parts, parts, defl, {**pairs, "item9": "price1"}, "2024-01") == \
        ("DF202",)
    bad = dict(pairs)
    bad["item2"] = "no such index"
    assert _code(total_of_parts, parts, defl, bad, "2024-01") == ("DF202",)
    del bad["item2"]
    assert _code(total_of_parts, parts, defl, bad, "2024-01") == ("DF201",)
    mixed = [*parts[:5], parts[5].with_values(parts[5].values, unit="EUR")]
    with pytest.raises(RealbasisError) as err:
        total_of_parts(mixed, defl, pairs, "2024-01")
    assert err.value.code == "DF203" and "'item6' (EUR)" in err.value.problems[0].found
    kinds = [*parts[:5], parts[5].with_values(parts[5].values, kind="stock")]
    assert _code(total_of_parts, kinds, defl, pairs, "2024-01") == ("DF204",)
    named = [*parts[:5], parts[5].with_values(parts[5].values, name="Total")]
    assert _code(total_of_parts, named, defl, {**{k: v for k, v in pairs.items()
                                                  if k != "item6"}, "Total": "price6"},
                 "2024-01") == ("DF206",)
    assert _code(total_of_parts, parts, defl, pairs, "2024-01", chain="tornqvist") == ("DF205",)
    gap = parts[0].with_values(parts[0].values.where(parts[0].index != ILO_MONTHS[2]))
    assert _code(total_of_parts, [gap, *parts[1:]], defl, pairs, "2024-01",
                 chain="fisher") == ("DF208",)
    # additive: the gap period is left empty, the rest is shown
    res = total_of_parts([gap, *parts[1:]], defl, pairs, "2024-01")
    assert np.isnan(res.total_real[2]) and not np.isnan(res.total_real[3])
    res = total_of_parts(parts, defl, pairs, "2024-01")
    assert _code(res.table, "quarterly") == ("DF213",)
    # parts with no period in common
    early = parts[0].with_values(parts[0].values.iloc[:2])
    late = parts[1].with_values(parts[1].values.iloc[3:])
    assert _code(total_of_parts, [early, late], defl, {"item1": "price1", "item2": "price2"},
                 "2024-01") == ("DF207",)
    # a net amount that turns the total negative cannot be chain-linked
    net = parts[1].with_values(pd.Series([-0.5, -0.5, -0.5, -5.0, -5.0], index=ILO_MONTHS))
    two = {"item1": "price1", "item2": "price2"}
    assert _code(total_of_parts, [parts[0], net], defl, two, "2024-01",
                 chain="fisher") == ("DF209",)
    assert total_of_parts([parts[0], net], defl, two, "2024-01").total_real[3] < 0


def test_chained_base_must_be_whole_result_periods_inside_the_total():
    parts, defl, pairs, _, _ = _three_year_parts()
    with pytest.raises(RealbasisError) as info:
        total_of_parts(parts, defl, pairs, "2021Q2", chain="fisher", to=ANNUAL)
    assert info.value.code == "DF210" and info.value.problems[0].remedy == "base_period"
    # the additive total takes any base the deflators can be rebased to
    assert total_of_parts(parts, defl, pairs, "2021Q2", to=ANNUAL).total_real.shape == (3,)


def test_parts_of_different_spans_are_cut_to_the_common_periods_with_a_warning():
    parts, defl, pairs = ilo_parts()
    short = parts[0].with_values(parts[0].values.iloc[1:])
    res = total_of_parts([short, *parts[1:]], defl, pairs, "2024-02", chain="fisher")
    assert res.period_labels.tolist() == ["2024-02", "2024-03", "2024-04", "2024-05"]
    w = [w for w in res.warnings if w.code == "DF211"]
    assert w and "'item1'" in w[0].found


def test_annual_chain_warns_about_an_incomplete_first_year():
    parts, defl, pairs = ilo_parts()
    res = total_of_parts(parts, defl, pairs, "2024-01", chain="annual")
    assert any(w.code == "DF212" for w in res.warnings)


# --------------------------------------------------------------------------- cores


def test_cores_on_plain_arrays():
    # The array cores the engine and the benchmark share; ILO ch. 19 data.
    fisher = fisher_chain(P, Q)
    np.testing.assert_allclose(fisher.level * V[0], V / np.r_[1.0, ILO_CHAINED["fisher"]],
                               atol=6e-4 * V.max())
    np.testing.assert_allclose(np.nansum(fisher.changes, axis=1)[1:],
                               np.diff(fisher.level), rtol=1e-12)
    add = additive_total(Q)
    np.testing.assert_allclose(add.level, Q.sum(axis=1))
    starts, ends, years = year_groups(pd.period_range("2023-11", periods=5, freq="M"), ANNUAL)
    assert starts.tolist() == [0, 2] and ends.tolist() == [2, 5]
    assert [str(y) for y in years] == ["2023", "2024"]
    ann = annual_overlap_chain(P, Q, starts)
    np.testing.assert_allclose(np.nansum(ann.changes, axis=1)[1:], np.diff(ann.level),
                               rtol=1e-12)
