"""Outlay-weighted deflation of budget authority (pipeline.outlay).

Method (common practice in public budgeting, DESIGN.md "facts of the trade"; stated here
from memory, no published table is reproduced): authority granted in year t is spent
r0 in year t, r1 in t+1, ... (the outlay or "spendout" rates, adding up to 1); each
year's outlays are deflated by that year's index, so real authority is
sum_k r_k x BA(t) x I(base) / I(t+k) and the implied authority deflator is
100 x nominal / real. The numbers below are worked by hand in the test; the index and
amounts are invented (plumbing values, not a published example).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from pipeline.deflate import deflate
from pipeline.errors import RealbasisError
from pipeline.model import Frequency, Series, Workspace
from pipeline.outlay import (
    AuthorityResult,
    OutlayRates,
    deflate_authority,
    outlay_rates,
    rates_by_series,
    with_outlay_rates,
)

FY7 = Frequency("FY", 7)


def fy_index(values, first="2025", status=None) -> Series:
    idx = pd.period_range(pd.Period(first, "Y-JUN"), periods=len(values), freq="Y-JUN")
    st = None if status is None else pd.Series(status, index=idx, dtype=object)
    return Series("Outlay deflator", pd.Series(values, index=idx, dtype=float), FY7,
                  kind="index", status=st)


def authority(values, first="2025", name="Capital program", status=None) -> Series:
    idx = pd.period_range(pd.Period(first, "Y-JUN"), periods=len(values), freq="Y-JUN")
    st = None if status is None else pd.Series(status, index=idx, dtype=object)
    return Series(name, pd.Series(values, index=idx, dtype=float), FY7, kind="flow",
                  unit="USD thousands", status=st)


# 4 % a year from FY2025 = 100 (invented)
INDEX = [100.0, 104.0, 108.16, 112.4864]


def test_worked_example_by_hand():
    res = deflate_authority([authority([1000.0, 1000.0])], [fy_index(INDEX)], "FY2025",
                            "0.5,0.3,0.2")
    assert isinstance(res, AuthorityResult)
    t = res.table()
    assert list(t.columns) == ["series", "deflator", "period", "nominal", "deflator_index",
                               "real", "status"]
    # by hand: FY2025 authority is spent 50 % in FY2025 (index 100), 30 % in FY2026 (104),
    # 20 % in FY2027 (108.16); each share deflated to FY2025 prices
    real_25 = 1000 * (0.5 * 100 / 100 + 0.3 * 100 / 104 + 0.2 * 100 / 108.16)
    real_26 = 1000 * (0.5 * 100 / 104 + 0.3 * 100 / 108.16 + 0.2 * 100 / 112.4864)
    assert real_25 == pytest.approx(973.3727810650887, rel=1e-12)
    assert t["real"].tolist() == pytest.approx([real_25, real_26], rel=1e-12)
    # the implied authority deflator 100 x nominal / real, and its base level
    implied_25 = 100 * 1000 / real_25
    assert implied_25 == pytest.approx(102.73556231003, rel=1e-10)
    assert res.implied[0, :, 0] == pytest.approx([implied_25, 100 * 1000 / real_26])
    assert res.base_level[0, 0] == pytest.approx(implied_25)
    # deflator_index: that deflator rebased so FY2025 = 100; with a constant 4 % a year
    # the rebased implied deflator moves exactly like the index (104 in FY2026)
    assert t["deflator_index"].tolist() == pytest.approx([100.0, 104.0], rel=1e-12)
    assert t["status"].tolist() == ["final", "final"]
    note = " ".join(res.method_note())
    assert "sum_k r_k x BA(t) x I(base) / I(t+k)" in note
    assert "50 % in the year of authority, 30 % the next year, 20 % the year after" in note
    assert "102.736" in note  # the base level is stated


def test_quarterly_index_is_taken_per_fiscal_year_as_the_mean_of_its_quarters():
    # FY2025 (July start) = 2024Q3..2025Q2 (model.Frequency: fiscal years named by the year
    # they end in); the year's index is the simple average of its quarters (DESIGN.md)
    q = pd.period_range("2024Q3", "2028Q2", freq="Q-DEC")
    per_year = np.repeat(INDEX, 4) + np.tile([-1.5, -0.5, 0.5, 1.5], 4)  # mean = INDEX
    ix = Series("Quarterly deflator", pd.Series(per_year, index=q), Frequency("Q"),
                kind="index")
    res = deflate_authority([authority([1000.0, 1000.0])], [ix], "FY2025", [0.5, 0.3, 0.2])
    real_25 = 1000 * (0.5 * 100 / 100 + 0.3 * 100 / 104 + 0.2 * 100 / 108.16)
    assert res.real[0, 0, 0] == pytest.approx(real_25, rel=1e-12)


def test_a_single_rate_of_one_is_plain_deflation():
    # everything spent in the year of authority: deflation by that year's index
    ba = authority([1000.0, 1100.0, 1200.0])
    ix = fy_index([*INDEX, 117.0])
    a = deflate_authority([ba], [ix], "FY2026", "1")
    b = deflate([ba], [ix], "FY2026")
    np.testing.assert_allclose(a.real, b.real, rtol=1e-13)
    np.testing.assert_allclose(a.index_used, b.index_used, rtol=1e-13)


def test_status_of_every_outlay_year_reaches_the_result():
    st = ["final", "final", "preliminary", "projected"]
    res = deflate_authority([authority([1000.0, 1000.0])], [fy_index(INDEX, status=st)],
                            "FY2025", "0.5,0.3,0.2")
    # FY2025 authority is spent up to FY2027 (preliminary); FY2026's up to FY2028 (projected)
    assert res.table()["status"].tolist() == ["preliminary", "projected"]
    codes = [w.code for w in res.warnings]
    assert "DF010" in codes
    # the base year's own outlays reach FY2027 (preliminary): the rebased implied
    # deflator rests on it, the real values do not
    assert "DF025" in codes


def test_a_projected_amount_is_projected():
    res = deflate_authority([authority([1000.0, 1000.0], status=["final", "projected"])],
                            [fy_index(INDEX)], "FY2025", "0.5,0.3,0.2")
    assert res.table()["status"].tolist() == ["final", "projected"]


def test_per_series_rates_leave_the_others_deflated_as_usual():
    capital = authority([1000.0, 1000.0])
    ops = authority([500.0, 520.0], name="Operations")
    ix = fy_index(INDEX)
    res = deflate_authority([capital, ops], [ix], "FY2025", {"Capital program": "50%,30%,20%"})
    assert res.series_names == ("Capital program", "Operations")
    plain = deflate([ops], [ix], "FY2025")
    np.testing.assert_allclose(res.real_frame(0)["Operations"].to_numpy(),
                               plain.real_frame(0)["Operations"].to_numpy(), rtol=1e-13)
    assert set(res.rates) == {"Capital program"}
    assert "deflated as usual" in " ".join(res.method_note())


def test_monthly_authority_is_summed_by_fiscal_year_first():
    months = pd.period_range("2024-07", "2026-06", freq="M")
    ba = Series("Capital program", pd.Series(1000.0 / 12, index=months), Frequency("M"),
                kind="flow")
    res = deflate_authority([ba], [fy_index(INDEX)], "FY2025", "0.5,0.3,0.2", to=FY7)
    real_25 = 1000 * (0.5 * 100 / 100 + 0.3 * 100 / 104 + 0.2 * 100 / 108.16)
    assert res.period_labels.tolist() == ["FY2025", "FY2026"]
    assert res.real[0, 0, 0] == pytest.approx(real_25, rel=1e-12)


def test_calendar_year_index_serves_fiscal_years_only_when_interpolated():
    years = pd.period_range("2023", "2029", freq="Y-DEC")
    ix = Series("Calendar deflator", pd.Series(100 * 1.04 ** np.arange(7), index=years),
                Frequency("A"), kind="index")
    with pytest.raises(RealbasisError) as e:
        deflate_authority([authority([1000.0, 1000.0])], [ix], "FY2025", "0.5,0.3,0.2")
    assert e.value.code in ("PE201", "PE203")
    res = deflate_authority([authority([1000.0, 1000.0])], [ix], "FY2025", "0.5,0.3,0.2",
                            interpolate=True)
    assert res.interpolated is not None and res.interpolated.all()
    assert "interpolated to months" in " ".join(res.method_note())


# --------------------------------------------------------------------------- errors


@pytest.mark.parametrize("text", ["0.5,0.3,0.1", "0.5,0.3,0.2,0.1", "1.000000002"])
def test_rates_must_add_up_to_one(text):
    with pytest.raises(RealbasisError) as e:
        outlay_rates(text)
    assert e.value.code == "DF020"
    assert "add up to" in e.value.problems[0].found


def test_rates_within_the_tolerance_are_accepted():
    # 0.1 + 0.2 + 0.7 is 1.0000000000000002 in binary floating point
    assert outlay_rates("0.1,0.2,0.7").rates == (0.1, 0.2, 0.7)
    assert outlay_rates("1.0000000005").rates == (1.0000000005,)  # within 1e-9
    assert outlay_rates("50%; 30%; 20%").rates == pytest.approx((0.5, 0.3, 0.2))
    assert outlay_rates([0, 0.6, 0.4]).lags == (1, 2)


@pytest.mark.parametrize("text, code", [("-0.1,0.6,0.5", "DF021"), ("0.5,x,0.5", "DF021"),
                                        ("", "DF021")])
def test_bad_rates_are_coded(text, code):
    with pytest.raises(RealbasisError) as e:
        outlay_rates(text, series="Capital program")
    assert e.value.code == code
    assert e.value.problems[0].where.series == "Capital program"


def test_outlay_years_the_index_does_not_reach_are_named():
    with pytest.raises(RealbasisError) as e:
        deflate_authority([authority([1000.0, 1000.0, 1000.0])], [fy_index(INDEX)], "FY2025",
                          "0.5,0.3,0.2")
    p = e.value.problems[0]
    assert p.code == "DF022" and p.remedy == "project_index"
    assert "FY2029" in p.found and "FY2027" in p.found  # missing year, and whose it is
    assert p.where.period == "FY2029"


def test_outlay_rates_need_yearly_flows():
    months = pd.period_range("2024-07", "2026-06", freq="M")
    ba = Series("Capital program", pd.Series(1.0, index=months), Frequency("M"), kind="flow")
    with pytest.raises(RealbasisError) as e:
        deflate_authority([ba], [fy_index(INDEX)], "FY2025", "0.5,0.3,0.2")
    assert e.value.code == "DF023" and e.value.problems[0].remedy == "result_frequency"
    stock = authority([1.0, 1.0]).with_values(authority([1.0, 1.0]).values, kind="stock")
    with pytest.raises(RealbasisError) as e:
        deflate_authority([stock], [fy_index(INDEX)], "FY2025", "0.5,0.3,0.2")
    assert e.value.code == "DF023"
    with pytest.raises(RealbasisError) as e:
        deflate_authority([authority([1.0, 1.0])], [fy_index(INDEX)], "FY2025",
                          {"No such program": "1"})
    assert e.value.code == "DF024"


def test_rates_saved_per_series_with_the_workspace():
    ws = Workspace("w1", "Budget", series={"Capital program": authority([1.0, 1.0])})
    ws = with_outlay_rates(ws, "Capital program", "0.5, 0.3, 0.2")
    assert ws.settings["outlay_rates"] == {"Capital program": [0.5, 0.3, 0.2]}
    assert rates_by_series(ws.settings["outlay_rates"]) == {
        "Capital program": OutlayRates((0.5, 0.3, 0.2))}
    assert with_outlay_rates(ws, "Capital program", "").settings["outlay_rates"] == {}
    with pytest.raises(RealbasisError) as e:
        with_outlay_rates(ws, "Nothing", "1")
    assert e.value.code == "DF024"
    with pytest.raises(RealbasisError) as e:
        with_outlay_rates(ws, "Capital program", "0.5,0.4")
    assert e.value.code == "DF020"


def test_authority_years_beyond_the_index_can_be_left_out():
    """The last year of authority t needs the index until t + the longest lag: years
    whose outlays the index does not reach are cut (said), the rest is deflated; the
    projection that would reach them all is named."""
    from pipeline.outlay import cut_to_reach, last_whole_year, reach_until

    ba = authority([1000.0, 1000.0, 1000.0, 1000.0])  # FY2025-FY2028
    ix = fy_index(INDEX)  # FY2025-FY2028
    rates = outlay_rates("0.5,0.3,0.2")
    assert last_whole_year(ix, FY7) == pd.Period("2028", "Y-JUN")
    assert reach_until(ba, rates, FY7) == "FY2030"
    kept, note = cut_to_reach(ba, [ix], rates, FY7)
    assert list(FY7.labels(kept.values.dropna().index)) == ["FY2025", "FY2026"]
    assert note is not None and "FY2026" in note and "FY2030" in note and "FY2028" in note
    res = deflate_authority([kept], [ix], "FY2025", rates)
    # FY2026 by hand: 1000 x (0.5 x 100/104 + 0.3 x 100/108.16 + 0.2 x 100/112.4864)
    assert res.real_series("Capital program", 0)[pd.Period("2026", "Y-JUN")] == pytest.approx(
        1000 * (0.5 * 100 / 104 + 0.3 * 100 / 108.16 + 0.2 * 100 / 112.4864))
    # nothing to cut, or nothing would be left: the series as it was
    assert cut_to_reach(ba, [ix], outlay_rates("1"), FY7) == (ba, None)
    assert cut_to_reach(ba, [fy_index(INDEX[:1])], rates, FY7) == (ba, None)
    # a monthly index ending in March: the fiscal year ending June is not complete
    months = pd.period_range("2024-07", "2026-03", freq="M")
    m = Series("M", pd.Series(100.0, index=months), Frequency("M"), kind="index")
    assert last_whole_year(m, FY7) == pd.Period("2025", "Y-JUN")
