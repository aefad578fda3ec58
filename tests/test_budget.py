"""The budget table (pipeline.budget) and its Budget sheet (pipeline.workbook).

Layout and arithmetic follow the common practice of multi-year budget tables (programs
by fiscal year in then-year and constant dollars, totals, real growth year on year and
the compound annual rate over the span; cf. the constant-dollar outlay tables of the OMB
Historical Tables, section 6 and table 10.1, recalled from memory). The demo files are
invented and illustrative: they test plumbing; the conversion formulas are the ones
proven in test_deflate.py / test_projection.py and are re-derived here by hand."""

from __future__ import annotations

import json

import numpy as np
import openpyxl
import pandas as pd
import pytest
from conftest import DEMO

from pipeline.budget import TOTAL, budget_table, from_result, write_budget
from pipeline.deflate import deflate
from pipeline.errors import RealbasisError
from pipeline.export import write_result
from pipeline.ingest import read_file
from pipeline.model import Frequency, Series
from pipeline.projection import project, to_then_year


@pytest.fixture(scope="module")
def tallmere():
    programs = list(read_file(DEMO / "tallmere_program_spending.csv", fy_start=7).series)
    gcd = read_file(DEMO / "government_consumption_deflator.csv").series[0]
    return programs, gcd


def test_programs_side_by_side_with_totals_and_growth(tallmere):
    programs, gcd = tallmere
    bt = budget_table(programs, gcd, "FY2025", fy_start=7)
    assert bt.years[0] == "FY2016" and bt.years[-1] == "FY2030"
    assert bt.programs == tuple(p.name for p in programs) and bt.has_total
    assert bt.dollars == "constant FY2025 dollars" and bt.unit == "USD thousands"
    # the proposed out-years FY2027-FY2030 are marked projected
    assert bt.out_years == ("FY2027", "FY2028", "FY2029", "FY2030")
    assert (bt.status.loc[:, "FY2027":"FY2030"] == "projected").all().all()
    # the numbers are the engine's: constant = then-year x I(FY2025) / I(t)
    res = deflate(programs, [gcd], "FY2025", fy_start=7)
    np.testing.assert_allclose(bt.constant.loc["Bus operations"].to_numpy(),
                               res.real_series("Bus operations").to_numpy(), rtol=1e-13)
    assert bt.constant.at["Bus operations", "FY2025"] == pytest.approx(
        bt.then_year.at["Bus operations", "FY2025"])  # base year: the same dollars
    # totals add the programs in both kinds of dollars
    names = list(bt.programs)
    for frame in (bt.then_year, bt.constant):
        np.testing.assert_allclose(frame.loc[TOTAL].to_numpy(),
                                   frame.loc[names].sum().to_numpy(), rtol=1e-13)
    # real growth on the previous year and the compound annual rate, by hand
    c = bt.constant.loc[TOTAL]
    assert bt.real_growth.at[TOTAL, "FY2026"] == pytest.approx(c["FY2026"] / c["FY2025"] - 1)
    assert np.isnan(bt.real_growth.at[TOTAL, "FY2016"])
    assert bt.real_cagr[TOTAL] == pytest.approx((c["FY2030"] / c["FY2016"]) ** (1 / 14) - 1)
    n = bt.then_year.loc[TOTAL]
    assert bt.nominal_cagr[TOTAL] == pytest.approx((n["FY2030"] / n["FY2016"]) ** (1 / 14) - 1)
    lay = bt.layout()
    assert list(lay.columns[:3]) == ["program", "measure", "FY2016"]
    assert lay.columns[-1] == "compound annual growth FY2016–FY2030"
    assert len(lay) == 4 * (len(names) + 1)
    assert lay["measure"].tolist()[:4] == ["then-year dollars", "constant FY2025 dollars",
                                          "real growth on the previous year", "status"]
    long = bt.long()
    assert len(long) == 15 * 5 and set(long["status"]) == {"final", "preliminary",
                                                           "projected"}
    assert "Projected (assumptions, not outcomes): FY2027–FY2030" in bt.method_note()


def test_constant_dollar_amounts_become_then_year_dollars(tallmere):
    # then(t) = constant(t) x I(t) / I(B) (common practice; pipeline.projection)
    programs, gcd = tallmere
    bt = budget_table(programs[:1], gcd, "FY2025", fy_start=7, given="constant")
    ref = to_then_year(programs[:1], gcd, "FY2025", fy_start=7).table
    np.testing.assert_allclose(bt.then_year.loc["Bus operations"].to_numpy(),
                               ref["then_year"].to_numpy(), rtol=1e-12)
    np.testing.assert_allclose(bt.constant.loc["Bus operations"].to_numpy(),
                               programs[0].values.to_numpy(), rtol=1e-13)
    assert bt.given == "constant" and not bt.has_total
    # and back again: deflating the then-year amounts gives the constant ones
    then = programs[0].with_values(bt.then_year.loc["Bus operations"].set_axis(
        programs[0].index))
    back = budget_table([then], gcd, "FY2025", fy_start=7)
    np.testing.assert_allclose(back.constant.loc["Bus operations"].to_numpy(),
                               programs[0].values.to_numpy(), rtol=1e-12)


def test_outlay_weighted_budget_table(tallmere):
    programs, gcd = tallmere
    longer = project(gcd, "2.5%", until="FY2032", fy_start=7).series
    bt = budget_table(programs, longer, "FY2025", fy_start=7,
                      outlay_rates={"Capital maintenance": "0.5,0.3,0.2"})
    assert set(bt.outlay) == {"Capital maintenance"}
    plain = budget_table(programs, longer, "FY2025", fy_start=7)
    assert bt.constant.at["Bus operations", "FY2020"] == pytest.approx(
        plain.constant.at["Bus operations", "FY2020"])
    assert bt.constant.at["Capital maintenance", "FY2020"] < plain.constant.at[
        "Capital maintenance", "FY2020"]  # outlays at later, higher prices
    assert any("outlay rates" in line for line in bt.method_note())


def test_monthly_series_are_laid_out_by_the_workspace_fiscal_year():
    revenue = list(read_file(DEMO / "harbourline_revenue.csv").series)
    cpi = read_file(DEMO / "consumer_indexes.csv").series[0]
    bt = budget_table(revenue, cpi, "FY2025", fy_start=7)
    assert bt.frequency == Frequency("FY", 7)
    assert bt.years[0] == "FY2015" and bt.years[-1] == "FY2026"  # complete years only
    # a result by month is not a budget table
    res = deflate(revenue, [cpi], "FY2025", fy_start=7)
    with pytest.raises(RealbasisError) as e:
        from_result(res)
    assert e.value.code == "DF030" and e.value.problems[0].remedy == "result_frequency"
    with pytest.raises(RealbasisError) as e:
        from_result(deflate(revenue, [cpi], "FY2025", fy_start=7, to=Frequency("FY", 7)),
                    "No such index")
    assert e.value.code == "DF033"
    with pytest.raises(RealbasisError) as e:
        budget_table(revenue, cpi, "FY2025", fy_start=7, given="constant")
    assert e.value.code == "DF032"


def test_programs_in_different_units_are_not_totalled():
    idx = pd.period_range(pd.Period("2025", "Y-JUN"), periods=2, freq="Y-JUN")
    fy = Frequency("FY", 7)
    a = Series("A", pd.Series([1.0, 2.0], index=idx), fy, unit="USD")
    b = Series("B", pd.Series([1.0, 2.0], index=idx), fy, unit="EUR")
    ix = Series("I", pd.Series([100.0, 102.0], index=idx), fy, kind="index")
    bt = budget_table([a, b], ix, "FY2025")
    assert not bt.has_total and any(w.code == "DF031" for w in bt.warnings)


def test_budget_exports_read_back(tallmere, tmp_path):
    programs, gcd = tallmere
    odd = programs[0].with_values(programs[0].values, name="=HYPERLINK(1)")
    bt = budget_table([odd, *programs[1:]], gcd, "FY2025", fy_start=7)
    csv = write_budget(bt, tmp_path / "b.csv")
    back = pd.read_csv(csv)
    assert back["program"].iloc[0] == "'=HYPERLINK(1)"  # neutralised, never a formula
    # one column per year holds dollars, growth and the status row: read as text
    assert float(back["FY2025"].iloc[1]) == pytest.approx(bt.constant.iloc[0]["FY2025"])
    data = json.loads(write_budget(bt, tmp_path / "b.json").read_text())
    t = data["tables"][0]
    assert t["out_years"] == ["FY2027", "FY2028", "FY2029", "FY2030"]
    assert t["cautions"] and t["method"] and len(t["rows"]) == len(bt.long())
    xlsx = write_budget([bt, budget_table(programs, gcd, "FY2024", fy_start=7)],
                        tmp_path / "b.xlsx")
    wb = openpyxl.load_workbook(xlsx)
    assert wb.sheetnames[-1] == "Method" and len(wb.sheetnames) == 3
    sheet = wb[wb.sheetnames[0]]
    rows = list(sheet.iter_rows(values_only=True))
    header = next(r for r in rows if r and r[0] == "program")
    first = rows[rows.index(header) + 1]
    assert first[0] == "=HYPERLINK(1)" or first[0] == "'=HYPERLINK(1)"
    assert sheet.cell(row=rows.index(header) + 2, column=1).data_type == "s"
    col = header.index("FY2030")
    assert rows[rows.index(header) - 1][col] == "projected"
    # the audit workbook of the deflation result carries the same Budget sheet
    res = deflate(programs, [gcd], "FY2025", fy_start=7)
    audit = write_result(res, tmp_path / "audit.xlsx", budget=from_result(res))
    assert "Budget" in openpyxl.load_workbook(audit).sheetnames
    with pytest.raises(RealbasisError) as e:
        write_budget(bt, tmp_path / "b.txt")
    assert e.value.code == "EX001"
