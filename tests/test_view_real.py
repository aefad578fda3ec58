"""The Real terms screen's view model (dashboard/screens/real/view.py), without a browser.

Numbers shown on screen come from the engine; these tests check that the screen asks the
engine the right question and shows the answer faithfully (base stated, statuses kept,
exact growth split). The hand-made examples use the textbook definitions cited beside
each check; the demo data is used only to exercise the screen.
"""

from __future__ import annotations

import dataclasses

import pandas as pd
import pytest

from dashboard.data import DataAccess, WorkspaceRef
from dashboard.screens.real import view
from pipeline.errors import RealbasisError
from pipeline.model import Workspace


def test_real_values_are_nominal_times_base_index_over_index(small: Workspace):
    # Constant dollars of base B: real(t) = nominal(t) * I(B) / I(t) (IMF Quarterly
    # National Accounts Manual 2017, ch. 8; DESIGN.md facts of the trade).
    c = view.compute_real(small, "Sales", "Index B", "2023")
    assert c.dollars_label == "constant 2023 dollars"
    jan24 = c.frame.set_index("period").loc["2024-01"]
    assert jan24["real"] == pytest.approx(103.0 * 100.0 / 105.0)
    # the status of the index travels to the real values it touched
    assert c.frame["status"].iloc[-1] == "preliminary"
    assert "constant 2023 dollars" in view.real_title(c)
    rows = {r["measure"]: r for r in view.growth_summary(c.nominal, c.real, c.frequency,
                                                          annualise=False)}
    assert "2024-12 on a year earlier" in rows
    assert not any("annualised" in m for m in rows)


def test_growth_split_is_exact_not_a_difference(small: Workspace):
    # (1 + nominal) = (1 + real)(1 + price): real growth = (1.03 / 1.05) - 1, not 3 % - 5 %
    # (DESIGN.md; IMF QNA Manual 2017, ch. 8 on volume and price measures).
    c = view.compute_real(small, "Sales", "Index B", "2023", to="A")
    rows = {r["measure"]: r for r in view.growth_summary(c.nominal, c.real, c.frequency)}
    r = rows["2024 on 2023"]
    assert r["nominal"] == pytest.approx(0.03)
    assert r["price"] == pytest.approx(0.05)
    assert r["real"] == pytest.approx(1.03 / 1.05 - 1)
    assert (1 + r["nominal"]) == pytest.approx((1 + r["real"]) * (1 + r["price"]))


def test_real_screen_outputs_state_the_base_and_show_problems(demo: Workspace):
    title, _fig, warn, growth, method = view.outputs(demo, "Apparel revenue",
                                                      "Chained consumer index", "2024", "auto",
                                                      False)
    assert "constant 2024 dollars" in title
    assert "preliminary" in str(warn.to_plotly_json())
    assert "Growth" in str(growth.to_plotly_json())
    assert "rebased" in str(method.to_plotly_json())
    # an impossible base is shown as a coded problem, not a crash
    title, _fig, warn, growth, method = view.outputs(demo, "Apparel revenue",
                                                     "Chained consumer index", "1999", "auto", False)
    assert title == "These figures cannot be computed" and "IX001" in str(warn.to_plotly_json())


def test_real_screen_seasonal_adjustment_on(demo: Workspace):
    title, _fig, _warn, _growth, method = view.outputs(demo, "Apparel revenue",
                                                     "Fixed-basket consumer index", "2024", "auto",
                                                     True)
    assert "seasonally adjusted" in title
    assert "Seasonal adjustment after deflation" in str(method.to_plotly_json())


def test_saved_choices_land_in_workspace_settings(demo: Workspace):
    ws = view.save_choices(demo, "Footwear revenue", "Chained consumer index", "2023", "A", True)
    assert ws.settings["series"] == "Footwear revenue" and ws.settings["seasonal_adjustment"] is True


def test_batch_seasonal_adjustment_adds_adjusted_series(access: DataAccess, demo: Workspace):
    ws = access.create("batch")
    ws = access.save(dataclasses.replace(ws, series=demo.series, indexes=demo.indexes),
                     action="setup")
    steps: list[tuple[int, int]] = []
    ref, message = view.adjust_all(access, WorkspaceRef(ws.id, ws.version), "stl",
                                   lambda a, b: steps.append((a, b)))
    assert ref is not None and steps[-1] == (4, 4)  # the four monthly Harbourline series
    new = access.load(ref)
    adjusted = [n for n in new.series if n.endswith("(seasonally adjusted)")]
    assert len(adjusted) == 4 and "Bus operations (seasonally adjusted)" not in new.series
    assert "STL" in str(message.to_plotly_json())
    # fiscal-year series only: nothing to adjust, said plainly
    only_fy = dataclasses.replace(demo, series={"Bus operations": demo.series["Bus operations"]})
    with pytest.raises(RealbasisError) as err:
        view.adjust_workspace(only_fy, "stl")
    assert "never seasonally adjusted" in str(err.value)


def test_real_terms_say_which_out_years_the_deflator_does_not_reach(demo: Workspace):
    """Tallmere's budget runs to FY2030 (FY2027 on projected); the monthly consumer index
    ends 2026-09, so those years cannot be deflated by it (common practice: no real value
    without an index value). The screen says so and names deflators that do reach them."""
    c = view.compute_real(demo, "Rail operations", "Chained consumer index", None)
    assert c.dollars_label == "constant FY2026 dollars"
    assert c.left_out is not None
    assert c.left_out.startswith("FY2027–FY2030 (projected values) of Rail operations")
    alternatives = c.left_out.split("reaches them (", 1)[1].split(")", 1)[0]
    # only deflators the engine's serve check says reach every period are recommended:
    # the calendar-year construction cost index does not nest with July fiscal years
    assert alternatives == "Government consumption deflator"
    # and the projection that would make this one serve is proposed
    assert c.left_out.endswith("or project Chained consumer index until 2030-06.")
    shown = view.outputs(demo, "Rail operations", "Chained consumer index", None, "auto", False)
    assert "FY2027–FY2030" in str(shown[2].to_plotly_json())
    # a deflator that reaches FY2030: nothing left out, the out-years are projected
    g = view.compute_real(demo, "Rail operations", "Government consumption deflator", None)
    assert g.left_out is None
    assert list(g.frame["period"])[-4:] == ["FY2027", "FY2028", "FY2029", "FY2030"]
    assert set(g.frame["status"].iloc[-4:]) == {"projected"}
    fig = view.outputs(demo, "Rail operations", "Government consumption deflator", None,
                       "auto", False)[1]
    dashed = [t for t in fig.data if t.name.endswith("(projected)")]
    assert dashed and all(t.line.dash == "dash" for t in dashed)


def test_a_monthly_series_takes_a_fiscal_year_base(demo: Workspace):
    """A monthly series in constant FY2025 dollars: the workspace's fiscal year (July, from
    Tallmere's fiscal series) makes FY2025 = July 2024 to June 2025 and 2024-25 the same
    year (US federal fiscal years are named by the year they end in, 31 U.S.C. 1102)."""
    c = view.compute_real(demo, "Apparel revenue", "Chained consumer index", "FY2025")
    assert c.dollars_label == "constant FY2025 dollars"
    same = view.compute_real(demo, "Apparel revenue", "Chained consumer index", "2024-25")
    assert same.real.equals(c.real)
    # real(t) = nominal(t) x I(B) / I(t), I(B) the mean of the 12 months Jul 2024-Jun 2025
    # (DESIGN.md facts of the trade; IMF QNA Manual 2017, ch. 8)
    ix = demo.indexes["Chained consumer index"]["2026-10-15"].values
    base = ix["2024-07":"2025-06"].mean()
    p = c.nominal.index[-1]
    assert c.real[p] == pytest.approx(c.nominal[p] * base / ix[p])
    assert any("Fiscal years start in July" in m for m in c.method)
    # a range of fiscal years as the base
    title, *_ = view.outputs(demo, "Apparel revenue", "Chained consumer index", "FY2025..FY2026",
                             "auto", False)
    assert title.startswith("Apparel revenue in constant FY2025..FY2026 dollars")


def test_the_deflator_picker_offers_only_deflators_that_serve(demo: Workspace):
    opts, value, why = view.deflator_picker(demo, "Rail operations", None, "FY2025", "auto",
                                            [], None)
    by = {o["value"]: o for o in opts}
    # calendar years do not nest with July-June fiscal years: not offered, and said why
    assert by["Construction cost index"]["disabled"] is True
    assert "serves only if interpolated" in by["Construction cost index"]["label"]
    assert "do not nest" in by["Construction cost index"]["title"]
    assert not by["Government consumption deflator"].get("disabled")
    assert value == "Chained consumer index"  # the saved choice, still usable (in part)
    text = str(why.to_plotly_json())
    assert "Construction cost index: serves only if interpolated" in text
    assert "Tick 'Fill in a less frequent deflator" in text  # this screen's words
    assert "Project 'Chained consumer index' until 2030-06" in text  # the proposal
    assert "--" not in text
    # with interpolation allowed (Denton) it serves
    opts, *_ = view.deflator_picker(demo, "Rail operations", None, "FY2025", "auto",
                                    ["denton"], None)
    assert not {o["value"]: o for o in opts}["Construction cost index"].get("disabled")
    # a choice that cannot serve is replaced by one that can
    _o, value, _w = view.deflator_picker(demo, "Rail operations", "Construction cost index",
                                         "FY2025", "auto", [], None)
    assert value != "Construction cost index"


def test_interpolated_deflator_serves_a_fiscal_series(demo: Workspace):
    c = view.compute_real(demo, "Rail operations", "Construction cost index", "FY2025",
                          interpolate=["denton"])
    assert c.dollars_label == "constant FY2025 dollars"
    assert any("Denton" in m for m in c.method)
    with pytest.raises(RealbasisError):
        view.compute_real(demo, "Rail operations", "Construction cost index", "FY2025")


def test_outlay_rates_on_real_terms(demo: Workspace):
    """Authority spent 50/30/20 % over three years: real(t) = sum_k r_k BA(t) I(B)/I(t+k)
    (common practice in public budgeting; worked by hand here from the index's yearly
    averages)."""
    c = view.compute_real(demo, "Capital maintenance", "Government consumption deflator",
                          "FY2025", outlay="50, 30, 20")
    assert "through outlay rates (50 % in the year of authority" in view.real_title(c)
    ix = demo.indexes["Government consumption deflator"]["2026-10-15"]
    from pipeline.indexes import rebase
    from pipeline.model import Frequency
    from pipeline.periods import to_frequency

    yearly = to_frequency(rebase(ix, "FY2025", fy_start=7), Frequency("FY", 7)).series.values
    row = c.frame.set_index("period").loc["FY2020"]
    p = pd.Period("2020", freq=Frequency("FY", 7).pandas_freq)  # FY2020: ends June 2020
    by_hand = row["nominal"] * (0.5 * 100 / yearly[p] + 0.3 * 100 / yearly[p + 1]
                                + 0.2 * 100 / yearly[p + 2])
    assert row["real"] == pytest.approx(by_hand)
    # the deflator ends 2030Q2 = FY2030: authority of FY2029-FY2030 is spent beyond it,
    # so those years are left out, said, and the projection that would show them proposed
    assert list(c.frame["period"])[-1] == "FY2028"
    assert c.left_out is not None and "FY2029–FY2030" in c.left_out
    assert c.left_out.endswith("project Government consumption deflator until FY2032.")
    # rates that do not add up are answered with what was typed, in percent
    with pytest.raises(RealbasisError) as err:
        view.compute_real(demo, "Capital maintenance", "Government consumption deflator",
                          "FY2025", outlay="50, 30, 10")
    p0 = err.value.problems[0]
    assert p0.code == "DF020" and "'50, 30, 10'" in p0.found and "90 %" in p0.found


def test_outlay_rates_are_saved_with_the_choices(demo: Workspace):
    ws = view.save_choices(demo, "Capital maintenance", "Government consumption deflator",
                           "FY2025", "auto", False, outlay="50, 30, 20")
    assert ws.settings["outlay_rates"] == {"Capital maintenance": [0.5, 0.3, 0.2]}
    assert "saved with the workspace" in view.outlay_state(ws, "Capital maintenance",
                                                           "50, 30, 20")
    assert "not saved yet" in view.outlay_state(demo, "Capital maintenance", "60, 40")
    cleared = view.save_choices(ws, "Capital maintenance", "Government consumption deflator",
                                "FY2025", "auto", False, outlay="")
    assert cleared.settings["outlay_rates"] == {}
    # the picker judges deflators by the outlay years too
    opts, value, _why = view.deflator_picker(ws, "Capital maintenance", None, "FY2025", "auto",
                                             [], "50, 30, 20")
    by = {o["value"]: o for o in opts}
    assert by["Chained consumer index"]["disabled"] is True  # base-year outlays need FY2027
    assert "outlay year" in by["Chained consumer index"]["label"]
    assert value == "Government consumption deflator"
