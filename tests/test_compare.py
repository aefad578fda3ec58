"""Deflators that can serve a series, and the comparison across them (pipeline.compare).

The serve check asks the deflation engine itself, so these tests check that its verdicts
and reasons match what the engine does, on the demo's Tallmere programs (July fiscal
years, FY2027-FY2030 proposed) and Harbourline revenue (monthly). Demo files are
invented and illustrative (plumbing). The one fact of the trade checked with numbers:
a calendar-year index brought to July-June fiscal years by interpolation averages the
two calendar years each fiscal year spans, half and half (common practice)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from conftest import DEMO

from pipeline.compare import (
    compare_deflators,
    result_frequency,
    serve_check,
    sign_verdict,
    trim_to_cover,
)
from pipeline.deflate import deflate
from pipeline.errors import RealbasisError
from pipeline.ingest import read_file
from pipeline.model import MONTHLY, Frequency, Series


def _load(name, fy_start=None):
    return list(read_file(DEMO / name, fy_start=fy_start).series)


@pytest.fixture(scope="module")
def demo():
    programs = _load("tallmere_program_spending.csv", 7)
    indexes = []
    for f in ("consumer_indexes.csv", "producer_index.csv", "wage_index.csv",
              "government_consumption_deflator.csv", "construction_cost_index.csv"):
        indexes.extend(_load(f))
    revenue = _load("harbourline_revenue.csv")
    return {"programs": programs, "indexes": {s.name: s for s in indexes},
            "revenue": revenue}


def test_the_serve_check_on_the_demo_programs(demo):
    bus = demo["programs"][0]
    chk = serve_check(bus, list(demo["indexes"].values()), "FY2025", to="auto", fy_start=7)
    v = {f.deflator: f for f in chk.fits}
    assert v["Government consumption deflator"].verdict == "serves"
    assert v["Government consumption deflator"].covers == ("FY2016", "FY2030")
    # monthly consumer index ends 2026-09: it serves FY2016-FY2026 and reaches the
    # proposed out-years once projected until June 2030 (checked by projecting)
    cpi = v["Fixed-basket consumer index"]
    assert cpi.verdict == "serves_in_part" and cpi.project_until == "2030-06"
    assert cpi.missing == ("FY2027", "FY2028", "FY2029", "FY2030")
    assert "FY2027–FY2030" in cpi.reason and "2030-06" in cpi.reason
    assert v["Private-sector wage index"].project_until == "2030Q2"
    # calendar years do not nest with fiscal years starting July: the cause of the PE201 /
    # PE203 refusals; it serves once interpolated
    cci = v["Construction cost index"]
    assert cci.verdict == "needs_interpolation" and cci.remedy == "interpolate"
    assert "calendar years" in cci.reason and "fiscal years starting July" in cci.reason
    assert {p.code for p in cci.problems} & {"PE201", "PE203"}
    assert chk.serving == ("Government consumption deflator",)
    assert "Construction cost index" not in chk.usable
    assert chk.alternatives("Fixed-basket consumer index") == (
        "Government consumption deflator",)
    assert len(chk.method_note()) > 1
    # what the check says is what the engine does
    with pytest.raises(RealbasisError):
        deflate([bus], [demo["indexes"]["Construction cost index"]], "FY2025", fy_start=7)


def test_interpolated_calendar_index_averages_the_two_calendar_years(demo):
    bus = demo["programs"][0]
    cci = demo["indexes"]["Construction cost index"]
    chk = serve_check(bus, [cci], "FY2025", fy_start=7, interpolate=True)
    assert chk.fits[0].verdict == "serves" and chk.fits[0].interpolated
    c = cci.values
    # July-June years: each fiscal year is half of each calendar year it spans (common
    # practice); the straight line between mid-year values gives exactly that average
    res = deflate([bus], [cci], "FY2025", fy_start=7, interpolate="linear")
    fy = {y: (c[pd.Period(str(y - 1), "Y-DEC")] + c[pd.Period(str(y), "Y-DEC")]) / 2
          for y in (2025, 2026, 2030)}
    idx = res.index_frame(0)["Bus operations"]
    assert idx[pd.Period("2026", "Y-JUN")] == pytest.approx(100 * fy[2026] / fy[2025])
    assert idx[pd.Period("2030", "Y-JUN")] == pytest.approx(100 * fy[2030] / fy[2025])
    assert res.has_interpolation and bool(res.interpolated.all())
    assert any(w.code == "PE208" for w in res.warnings)
    # the default, proportional Denton, keeps every calendar year's published average in
    # its months (IMF QNA Manual 2017, ch. 6), so the fiscal years sit close to the
    # half-and-half average without equalling it
    from pipeline.benchmark import interpolate as denton
    from pipeline.model import MONTHLY

    months = denton(cci, MONTHLY, method="denton").series.values
    yearly = months.groupby(months.index.year).mean()
    for y in (2015, 2020, 2025):
        assert yearly[y] == pytest.approx(c[pd.Period(str(y), "Y-DEC")], rel=1e-10)
    res_d = deflate([bus], [cci], "FY2025", fy_start=7, interpolate=True)
    idx_d = res_d.index_frame(0)["Bus operations"]
    fy_d = months.groupby(months.index.asfreq("Y-JUN")).mean()
    assert idx_d[pd.Period("2026", "Y-JUN")] == pytest.approx(
        100 * fy_d[pd.Period("2026", "Y-JUN")] / fy_d[pd.Period("2025", "Y-JUN")])
    assert idx_d[pd.Period("2026", "Y-JUN")] == pytest.approx(100 * fy[2026] / fy[2025],
                                                              rel=2e-3)
    assert res_d.has_interpolation and bool(res_d.interpolated.all())


def test_monthly_revenue_and_a_quarterly_index(demo):
    apparel = demo["revenue"][0]
    wage = demo["indexes"]["Private-sector wage index"]
    gcd = demo["indexes"]["Government consumption deflator"]
    chk = serve_check(apparel, [gcd, wage], "2025", to="native")
    g = chk.fit("Government consumption deflator")
    assert g.verdict == "needs_interpolation"
    assert g.result_frequency == Frequency("Q")  # it serves as it is with quarterly results
    assert g.remedy == "result_frequency" and "quarterly" in g.reason
    # automatic results go to the deflator's quarters: then both serve (wage index in part)
    auto = serve_check(apparel, [gcd, wage], "FY2025", to="auto", fy_start=7)
    assert auto.fit("Government consumption deflator").verdict == "serves"
    w = auto.fit("Private-sector wage index")
    assert w.verdict == "serves_in_part" and w.missing == ("2026Q3",)
    assert w.project_until == "2026Q3"


def test_needs_projection_and_cannot(demo):
    bus = demo["programs"][0]
    gcd = demo["indexes"]["Government consumption deflator"]
    short = gcd.with_values(gcd.values[:pd.Period("2024Q2", "Q")])
    chk = serve_check(bus, [short], "FY2025", fy_start=7)
    f = chk.fits[0]
    assert f.verdict == "needs_projection" and f.project_until == "2030Q2"
    assert "does not reach the base FY2025" in f.reason and f.remedy == "project_index"
    holed = gcd.with_values(gcd.values.where(gcd.index != pd.Period("2019Q2", "Q")))
    money = bus.with_values(bus.values, name="Money", kind="flow")
    chk = serve_check(bus, [holed, money], "FY2025", fy_start=7)
    assert [x.verdict for x in chk.fits] == ["cannot", "cannot"]
    assert "2019Q2" in chk.fits[0].reason or "FY2019" in chk.fits[0].reason
    assert "not a price index" in chk.fits[1].reason
    late = gcd.with_values(gcd.values[pd.Period("2020Q1", "Q"):])
    assert serve_check(bus, [late], "FY2016", fy_start=7).fits[0].verdict == "cannot"


def test_the_comparison_leaves_out_what_cannot_serve(demo):
    bus = demo["programs"][0]
    ds = list(demo["indexes"].values())
    c = compare_deflators(bus, ds, "FY2025", fy_start=7, measure="cagr")
    assert "Construction cost index" not in c.deflators and len(c.deflators) == 5
    assert [f.deflator for f in c.left_out] == ["Construction cost index"]
    assert "Construction cost index" in c.left_out_text()
    assert any(w.code == "DF041" and w.remedy == "interpolate" for w in c.warnings)
    # the series is cut to the periods every kept deflator covers
    assert c.result.period_labels.tolist()[-1] == "FY2026" and "FY2016 to FY2026" in c.cut
    # the verdict is over the kept deflators and agrees with the engine's own numbers
    reals = [float(r["real"]) for r in c.rows]
    direct = deflate([trim_to_cover(bus, ds[:5])[0]], ds[:5], "FY2025", fy_start=7)
    for name, r in zip(c.deflators, reals, strict=True):
        s = direct.real_series("Bus operations", name)
        assert r == pytest.approx((s.iloc[-1] / s.iloc[0]) ** (1 / 10) - 1)
    assert c.verdict.n == 5 and c.verdict.text.startswith("Real growth is")
    # nominal, price and real growth split exactly: (1 + n) = (1 + r)(1 + p) (DESIGN.md)
    for r in c.rows:
        assert 1 + r["nominal"] == pytest.approx((1 + r["real"]) * (1 + r["price"]))
    assert "The verdict is over the other deflators." in c.method_note()[-1]
    with_interp = compare_deflators(bus, ds, "FY2025", fy_start=7, interpolate=True)
    assert len(with_interp.deflators) == 6 and not with_interp.left_out


def test_no_deflator_can_serve(demo):
    bus = demo["programs"][0]
    cci = demo["indexes"]["Construction cost index"]
    with pytest.raises(RealbasisError) as e:
        compare_deflators(bus, [cci], "FY2025", fy_start=7)
    p = e.value.problems[0]
    assert p.code == "DF040" and p.severity == "error" and p.remedy == "interpolate"
    with pytest.raises(RealbasisError) as e:
        compare_deflators(bus, [], "FY2025", fy_start=7)
    assert e.value.code == "DF040"


def test_sign_verdict_words():
    # a plain verdict on the sign of real growth across deflators (DESIGN.md, screen 4)
    assert sign_verdict([0.01, 0.02], "yoy", "x").text.startswith(
        "Real growth is positive under all 2 deflators")
    assert sign_verdict([-0.01]).tone == "warn"
    v = sign_verdict([0.01, -0.02, float("nan")])
    assert v.tone == "error" and (v.positive, v.negative) == (1, 1)
    assert "depends on the deflator" in v.text
    assert sign_verdict([]).text.startswith("Real growth cannot be computed")


def test_result_frequency_choices(demo):
    bus = demo["programs"][0]
    apparel = demo["revenue"][0]
    gcd = demo["indexes"]["Government consumption deflator"]
    assert result_frequency("auto", apparel, [gcd]) == Frequency("Q")
    assert result_frequency("auto", bus, [gcd]) is None
    assert result_frequency("native", apparel) is None
    assert result_frequency("FY-7") == Frequency("FY", 7)
    assert result_frequency("FY", apparel, fy_start=4) == Frequency("FY", 4)
    assert result_frequency("A") == Frequency("A")
    assert result_frequency(MONTHLY) == MONTHLY
    with pytest.raises(RealbasisError) as e:
        result_frequency("FY", apparel)
    assert e.value.code == "PE102" and e.value.problems[0].remedy == "fiscal_start"
    with pytest.raises(RealbasisError) as e:
        result_frequency("weekly")
    assert e.value.code == "DF042"


def test_trim_to_cover():
    idx = pd.period_range("2020-01", "2020-12", freq="M")
    s = Series("Sales", pd.Series(np.arange(12.0) + 1, index=idx), MONTHLY)
    ix = Series("Ix", pd.Series(100.0, index=idx[2:10]), MONTHLY, kind="index")
    kept, note = trim_to_cover(s, [ix])
    assert kept.values.index[0] == idx[2] and "2020-03 to 2020-10" in note
    assert trim_to_cover(s, [s.with_values(s.values, kind="index")])[1] is None
    far = Series("Far", pd.Series(100.0, index=pd.period_range("2030-01", periods=3,
                                                               freq="M")), MONTHLY,
                 kind="index")
    with pytest.raises(RealbasisError) as e:
        trim_to_cover(s, [far])
    assert e.value.code == "DF040"


def test_missing_periods_in_two_stretches_are_named_apart(demo):
    """An index that starts after the series and ends before it leaves out two
    stretches; the reason names each, not one range over the periods it does cover."""
    bus = demo["programs"][0]
    wage = demo["indexes"]["Private-sector wage index"]
    late = wage.with_values(wage.values["2019Q1":])
    chk = serve_check(bus, [late], "FY2025", to="auto", fy_start=7)
    f = chk.fits[0]
    assert f.verdict == "serves_in_part"
    assert "FY2016–FY2019 and FY2027–FY2030 of the series are left out" in f.reason
