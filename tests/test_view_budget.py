"""The Budget table screen's view model (dashboard/screens/budget/view.py), without a
browser.

The table's numbers come from the engine (pipeline.workbook.workspace_budget ->
pipeline.budget.budget_table); these tests check that the screen asks the right question
and shows the answer faithfully, recomputing cells by hand from the textbook definitions
cited beside each check. The demo data (invented, illustrative) only exercises the screen.
"""

from __future__ import annotations

import dataclasses
import io
import json

import openpyxl
import pandas as pd
import pytest

from dashboard.data import DataAccess, WorkspaceRef
from dashboard.screens.budget import view
from pipeline.errors import RealbasisError
from pipeline.indexes import rebase
from pipeline.model import Frequency, Workspace
from pipeline.periods import to_frequency

PROGRAMS = ["Bus operations", "Rail operations", "Capital maintenance", "Paratransit services"]
GOV = "Government consumption deflator"
FY7 = Frequency("FY", 7)


def _yearly_index(ws: Workspace, name: str, base: str) -> pd.Series:
    """The deflator rebased to ``base`` = 100 and averaged per July-June fiscal year
    (period index of a multi-month period = simple average of its sub-periods: common
    practice, DESIGN.md)."""
    ix = ws.indexes[name]["2026-10-15"]
    return to_frequency(rebase(ix, base, fy_start=7), FY7).series.values


def _year(label: str) -> pd.Period:
    return pd.Period(label[2:], freq=FY7.pandas_freq)


def test_the_programs_and_years_on_offer(demo: Workspace):
    opts, programs, years, base, freq, given, interp = view.options_for(demo, None, None)
    assert programs == PROGRAMS  # the workspace's yearly (fiscal) series
    assert {"label": "Fiscal years starting July", "value": "FY-7"} in years
    assert (base, freq, given, interp) == ("", "auto", "then-year", [])
    assert len(opts) == len(demo.series)


def test_only_deflators_that_serve_every_program_are_offered(demo: Workspace):
    opts, value, why = view.deflator_picker(demo, PROGRAMS, None, "FY2025", "auto", [])
    by = {o["value"]: o for o in opts}
    assert by["Construction cost index"]["disabled"] is True
    assert value == GOV  # the first that serves every program and year
    assert "the 4 programs" in str(why.to_plotly_json())
    opts, *_ = view.deflator_picker(demo, PROGRAMS, None, "FY2025", "auto", ["denton"])
    assert not {o["value"]: o for o in opts}["Construction cost index"].get("disabled")


def test_budget_table_in_then_year_and_constant_dollars(demo: Workspace):
    title, summary, _fig, table, _warn, method = view.outputs(
        demo, PROGRAMS, GOV, "FY2025", "auto", "then-year", [])
    assert title.startswith("Programs by fiscal years starting July in then-year and "
                            "constant FY2025 dollars, deflated by Government consumption")
    t = view.compute(demo, PROGRAMS, GOV, "FY2025", "auto", "then-year", [])
    ix = _yearly_index(demo, GOV, "FY2025")
    # constant(t) = then(t) x I(B) / I(t), I(B) = 100 after rebasing (DESIGN.md facts of
    # the trade; IMF QNA Manual 2017, ch. 8)
    for prog, year in (("Rail operations", "FY2018"), ("Bus operations", "FY2029")):
        then = demo.series[prog].values[_year(year)]
        assert t.constant.at[prog, year] == pytest.approx(then * 100.0 / ix[_year(year)])
    # totals add the programs; real growth is constant(t)/constant(t-1) - 1; the compound
    # annual rate is (x_last / x_first)^(1/years) - 1 (growth definitions, DESIGN.md)
    assert t.constant.at["Total", "FY2020"] == pytest.approx(
        sum(t.constant.at[p, "FY2020"] for p in PROGRAMS))
    assert t.real_growth.at["Total", "FY2021"] == pytest.approx(
        t.constant.at["Total", "FY2021"] / t.constant.at["Total", "FY2020"] - 1)
    n = len(t.years) - 1
    assert t.real_cagr["Total"] == pytest.approx(
        (t.constant.at["Total", "FY2030"] / t.constant.at["Total", "FY2016"]) ** (1 / n) - 1)
    # out-years marked projected, visibly, and said in the summary and method
    assert t.out_years[-4:] == ("FY2027", "FY2028", "FY2029", "FY2030")
    html = str(table.to_plotly_json())
    assert "rb-projected" in html and "projected" in html
    assert "FY2027–FY2030: projected" in str(summary.to_plotly_json())
    assert "real growth" in str(summary.to_plotly_json())
    assert "Fiscal years start in July" in str(method.to_plotly_json())


def test_constant_dollars_turned_into_then_year_dollars(demo: Workspace):
    # amounts given in constant FY2025 dollars: then(t) = constant(t) x I(t) / I(B)
    # (the inverse of deflation; common practice in multi-year budgeting)
    t = view.compute(demo, ["Rail operations"], GOV, "FY2025", "auto", "constant", [])
    ix = _yearly_index(demo, GOV, "FY2025")
    amount = demo.series["Rail operations"].values[_year("FY2019")]
    assert t.constant.at["Rail operations", "FY2019"] == pytest.approx(amount)
    assert t.then_year.at["Rail operations", "FY2019"] == pytest.approx(
        amount * ix[_year("FY2019")] / 100.0)
    assert t.given == "constant"


def test_monthly_programs_by_fiscal_year(demo: Workspace):
    t = view.compute(demo, ["Apparel revenue", "Footwear revenue"], "Chained consumer index",
                     "FY2025", "auto", "then-year", [])
    assert t.frequency == FY7 and "FY2025" in t.years
    # flows sum by year (IMF QNA Manual 2017, ch. 8): the FY2025 then-year amount is the
    # sum of July 2024 - June 2025
    months = demo.series["Apparel revenue"].values["2024-07":"2025-06"]
    assert t.then_year.at["Apparel revenue", "FY2025"] == pytest.approx(months.sum())


def test_outlay_rates_saved_and_used_in_the_table(access: DataAccess, demo: Workspace):
    ws = access.create("budget")
    ws = access.save(dataclasses.replace(ws, series=demo.series, indexes=demo.indexes),
                     action="setup")
    ref = WorkspaceRef(ws.id, ws.version)
    bad_ref, message = view.save_outlay_rates(access, ref, "Capital maintenance", "50, 30, 10")
    assert bad_ref is None and "DF020" in str(message.to_plotly_json())
    # what was typed (the note is one HTML string: its repr escapes the quotes)
    assert "'50, 30, 10'" in str(message.to_plotly_json()).replace("\\'", "'")
    ref, message = view.save_outlay_rates(access, ref, "Capital maintenance", "50, 30, 20")
    assert ref is not None and "30 % the next year" in str(message.to_plotly_json())
    ws = access.load(ref)
    assert view.outlay_text(ws, "Capital maintenance") == "50, 30, 20"
    assert "Capital maintenance" in str(view.outlay_saved_view(ws, PROGRAMS).to_plotly_json())
    t = view.compute(ws, PROGRAMS, GOV, "FY2025", "auto", "then-year", [])
    # real(t) = sum_k r_k x BA(t) x I(B) / I(t+k) (common practice in public budgeting),
    # worked by hand from the yearly index
    ix = _yearly_index(ws, GOV, "FY2025")
    p = _year("FY2021")
    ba = ws.series["Capital maintenance"].values[p]
    assert t.constant.at["Capital maintenance", "FY2021"] == pytest.approx(
        ba * (0.5 * 100 / ix[p] + 0.3 * 100 / ix[p + 1] + 0.2 * 100 / ix[p + 2]))
    # programs without rates: each year by its own index
    q = ws.series["Bus operations"].values[p]
    assert t.constant.at["Bus operations", "FY2021"] == pytest.approx(q * 100 / ix[p])
    # the index ends with FY2030: authority of FY2029-FY2030 is spent beyond it
    assert pd.isna(t.then_year.at["Capital maintenance", "FY2030"])
    assert any("FY2032" in m for m in t.method_note())
    assert t.outlay["Capital maintenance"].rates == pytest.approx((0.5, 0.3, 0.2))
    # the picker: deflators whose index does not reach the base years' outlays are off
    opts, value, _why = view.deflator_picker(ws, PROGRAMS, None, "FY2025", "auto", [])
    assert {o["value"]: o for o in opts}["Chained consumer index"]["disabled"] is True
    assert value == GOV
    cleared, _m = view.save_outlay_rates(access, ref, "Capital maintenance", "")
    assert view.outlay_text(access.load(cleared), "Capital maintenance") == ""


def test_saved_choices_reach_the_workspace_export(access: DataAccess, demo: Workspace,
                                                  tmp_path):
    """The share screen's downloads (pipeline.workbook.export_workspace) carry the Budget
    sheet from the saved budget choices and the outlay rates saved per program."""
    from pipeline.outlay import with_outlay_rates
    from pipeline.workbook import export_workspace

    ws = view.save_choices(with_outlay_rates(demo, "Capital maintenance", "0.5,0.3,0.2"),
                           PROGRAMS, GOV, "FY2025", "auto", "then-year", [])
    ws = dataclasses.replace(ws, settings={**ws.settings, "series": "Capital maintenance",
                                           "deflators": [GOV], "base": "FY2025"})
    xlsx = export_workspace(ws, tmp_path / "w.xlsx")
    book = openpyxl.load_workbook(xlsx, read_only=True)
    assert "Budget" in book.sheetnames
    rows = [r for r in book["Budget"].iter_rows(values_only=True)]
    assert rows[0][0].startswith("Programs by fiscal years starting July")
    assert any(r and r[0] == "Total" for r in rows)
    data = json.loads(export_workspace(ws, tmp_path / "w.json").read_text())
    assert data["budget"][0]["outlay_rates"] == {"Capital maintenance": [0.5, 0.3, 0.2]}
    assert any("outlay rates" in m for m in data["method"])  # the result itself too
    csv = export_workspace(ws, tmp_path / "w.csv").read_text()
    assert csv.startswith("series,deflator,period,nominal,deflator_index,real,status")


def test_downloads_of_the_table(demo: Workspace):
    data, name = view.download(demo, "csv", PROGRAMS, GOV, "FY2025", "auto", "then-year", [])
    assert name.endswith("-budget.csv")
    frame = pd.read_csv(io.BytesIO(data))
    assert list(frame.columns[:3]) == ["program", "measure", "FY2016"]
    assert "constant FY2025 dollars" in set(frame["measure"])
    data, name = view.download(demo, "xlsx", PROGRAMS, GOV, "FY2025", "auto", "then-year", [])
    assert name.endswith(".xlsx")
    assert "Budget" in openpyxl.load_workbook(io.BytesIO(data), read_only=True).sheetnames


def test_problems_are_shown_not_raised(demo: Workspace):
    title, _s, _f, _t, warn, _m = view.outputs(demo, PROGRAMS, "Construction cost index",
                                               "FY2025", "auto", "then-year", [])
    assert title == "This table cannot be computed"
    text = str(warn.to_plotly_json())
    assert "PE203" in text  # FY2025 is not whole calendar years of the index
    assert "--" not in text  # this screen's words, no command-line option
    assert view.outputs(demo, [], GOV, "FY2025", "auto", "then-year", [])[0].startswith(
        "Choose the programs")
    with pytest.raises(RealbasisError):
        view.compute(demo, PROGRAMS, "Construction cost index", "FY2025", "auto", "then-year",
                     [])


def test_export_leaves_out_a_deflator_that_cannot_reach_the_outlay_years(demo: Workspace,
                                                                        tmp_path):
    """Saved choices with several deflators, one program with outlay rates: the monthly
    consumer indexes end 2026-09, short of the base year's outlays (FY2025 authority is
    spent until FY2027), so they are left out of the export and named; the rest stands."""
    from pipeline.outlay import with_outlay_rates
    from pipeline.workbook import workspace_result

    ws = with_outlay_rates(demo, "Capital maintenance", "0.5,0.3,0.2")
    ws = dataclasses.replace(ws, settings={**ws.settings, "series": "Capital maintenance",
                                           "base": "FY2025"})
    result, used, notes = workspace_result(ws)
    assert result.deflator_names == (GOV,) and list(used) == [GOV]
    assert any(n.startswith("Chained consumer index is left out:") for n in notes)
    assert result.rates["Capital maintenance"].rates == pytest.approx((0.5, 0.3, 0.2))
    # the series are cut to what the deflator kept covers, not to the ones left out
    assert result.frequency.label(result.periods[-1]) == "FY2030"
    assert not any("FY2016 to FY2026" in n for n in notes)
