"""The Real terms screen's view model (dashboard/screens/real/view.py), without a browser.

Numbers shown on screen come from the engine; these tests check that the screen asks the
engine the right question and shows the answer faithfully (base stated, statuses kept,
exact growth split). The hand-made examples use the textbook definitions cited beside
each check; the demo data is used only to exercise the screen.
"""

from __future__ import annotations

import dataclasses

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
    assert "Government consumption deflator" in c.left_out
    assert "Chained consumer index" not in c.left_out.split("(", 2)[2]  # not offered itself
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
