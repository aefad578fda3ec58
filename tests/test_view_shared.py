"""The view model the screens share (dashboard/screens/_shared/view.py), without a browser.

Numbers shown on screen come from the engine; these tests check that the dashboard asks
the engine the right question and shows the answer faithfully (base stated, statuses
kept, verdicts right). The hand-made examples use the textbook definitions cited beside
each check; the demo data is used only to exercise the screens.
"""

from __future__ import annotations

import dataclasses
import math

import pandas as pd
import pytest
from conftest import monthly_series

from dashboard.screens._shared import view
from pipeline.errors import RealbasisError
from pipeline.model import QUARTERLY, Frequency, Series, Workspace


def test_default_base_is_the_last_complete_year():
    s = monthly_series("S", [1.0] * 21, start="2024-01")  # to 2025-09
    assert view.default_base(s) == "2024"
    q = Series("Q", pd.Series([1.0] * 8, index=pd.period_range("2023Q1", periods=8, freq="Q")),
               QUARTERLY)
    assert view.default_base(q) == "2024"
    fy = Frequency("FY", 7)
    a = Series("F", pd.Series([1.0, 2.0], index=pd.period_range("2024", periods=2,
                                                                  freq=fy.pandas_freq)), fy)
    assert view.default_base(a) == "FY2025"


def test_automatic_frequency_follows_a_less_frequent_deflator(demo: Workspace):
    # the engine's choice (pipeline.compare.result_frequency), with the workspace's FY
    s = monthly_series("S", [1.0] * 12)
    q = Series("D", pd.Series([1.0] * 4, index=pd.period_range("2023Q1", periods=4, freq="Q")),
               QUARTERLY, kind="index")
    assert view.result_frequency(demo, "auto", s, [q]) == QUARTERLY
    assert view.result_frequency(demo, "auto", s,
                                 [monthly_series("M", [1.0] * 3, kind="index")]) is None
    assert view.result_frequency(demo, "FY-7") == Frequency("FY", 7)
    # fiscal years offered under 'Show as' are the workspace's (July, from Tallmere)
    values = [o["value"] for o in view.frequency_options(demo, s)]
    assert "FY-7" in values and values[:2] == ["auto", "native"]


def test_period_fields_read_fiscal_labels_with_the_workspace_fiscal_year(demo: Workspace):
    # July-June fiscal years named by the year they end in (31 U.S.C. 1102)
    assert view.fy_start(demo) == 7
    span = view.read_base(demo, "FY2025")
    assert (span.first_month, span.last_month) == (pd.Period("2024-07", "M").ordinal,
                                                   pd.Period("2025-06", "M").ordinal)
    assert view.read_base(demo, "2024-25") == span
    assert view.period_placeholder(demo) == "e.g. FY2025, 2024-25 or FY2025..FY2027"
    assert "FY" not in view.period_placeholder(dataclasses.replace(demo, series={},
                                                                   indexes={}))
    assert view.fiscal_note(demo)[0].startswith("Fiscal years start in July")


def test_total_sums_series_and_keeps_the_worst_status(small: Workspace):
    other = monthly_series("Other", [1.0] * 23 + [float("nan")],
                     status=["final"] * 20 + ["projected"] * 4)
    ws = dataclasses.replace(small, series={**small.series, "Other": other})
    total = view.pick_series(ws, view.TOTAL)
    assert total.values.iloc[0] == 101.0
    assert math.isnan(total.values.iloc[-1])  # a part is missing: the total is missing
    assert total.status is not None and total.status.iloc[-2] == "projected"
    option = next(o for o in view.series_options(ws) if o["value"].startswith(view.TOTAL))
    assert option["label"].startswith("Total of 2 series")
    assert view.pick_series(ws, option["value"]).values.iloc[0] == 101.0


def test_comparison_verdict_changes_with_the_deflators(small: Workspace):
    # Nominal +3 %; index A +2 % -> real +0.98 %; index B +5 % -> real -1.9 %: the exact
    # split (1 + nominal) = (1 + real)(1 + price) (IMF QNA Manual 2017, ch. 8).
    one = view.comparison(small, "Sales", ["Index A"], "2023", to="A")
    both = view.comparison(small, "Sales", ["Index A", "Index B"], "2023", to="A")
    assert one.verdict.text.startswith("Real growth is positive under the one deflator")
    assert both.verdict.text.startswith("The sign depends on the deflator")
    reals = {r["deflator"]: r["real"] for r in both.rows}
    assert reals["Index A"] == pytest.approx(1.03 / 1.02 - 1)
    assert reals["Index B"] == pytest.approx(1.03 / 1.05 - 1)
    assert {r["deflator"]: r["status"] for r in both.rows}["Index B"] == "preliminary"


def test_totals_are_offered_per_group_of_like_series(demo: Workspace):
    totals = [o for o in view.series_options(demo) if o["value"].startswith(view.TOTAL)]
    assert len(totals) == 2  # Harbourline's monthly segments, Tallmere's fiscal-year programs
    fy_total = next(o["value"] for o in totals if "fiscal" in o["label"])
    cmp = view.comparison(demo, fy_total, ["Government consumption deflator"], "FY2025")
    # the total says which four series it sums (issue 12)
    assert cmp.title.startswith("Total of 4 series (Bus operations, Rail operations, Capital "
                                "maintenance and Paratransit services) in constant FY2025 "
                                "dollars")


def test_deflator_choices_say_why_and_propose_a_projection(demo: Workspace):
    rail = demo.series["Rail operations"]
    ch = view.deflator_choices(demo, [rail], "FY2025")
    assert "Construction cost index" not in ch.usable
    assert "Government consumption deflator" in ch.usable
    # the monthly consumer index covers the base but not the out-years: usable, in part,
    # and the engine names the projection that would make it serve (checked by projecting)
    assert ch.fits["Chained consumer index"].verdict == "serves_in_part"
    assert ch.project_until["Chained consumer index"] == "2030-06"
    assert ch.alternatives("Chained consumer index") == ("Government consumption deflator",)
    # runs of missing periods are named separately (the component indexes start in 2019)
    note = next(n for n in ch.notes if n.startswith("Goods purchased"))
    assert "FY2016–FY2019 and FY2027–FY2030" in note
    assert ch.summary.startswith("1 of 10 deflators cannot deflate Rail operations")
    # an unreadable base leaves the options unjudged (the base problem shows elsewhere)
    assert view.deflator_choices(demo, [rail], "nonsense").notes == ()


def test_outlay_box_is_read_in_percent():
    assert view.read_outlay_field("50, 30, 20").rates == pytest.approx((0.5, 0.3, 0.2))
    assert view.read_outlay_field("50%; 30% 20%").rates == pytest.approx((0.5, 0.3, 0.2))
    assert view.read_outlay_field("0.5, 0.3, 0.2").rates == pytest.approx((0.5, 0.3, 0.2))
    assert view.read_outlay_field("100").rates == (1.0,)
    assert view.read_outlay_field("  ") is None
    with pytest.raises(RealbasisError) as err:
        view.read_outlay_field("50, 30, 10", "Capital maintenance")
    p = err.value.problems[0]
    assert p.code == "DF020" and p.message.endswith("100 %")
    assert p.found == "'50, 30, 10'; they add up to 90 %"
    with pytest.raises(RealbasisError) as err:
        view.read_outlay_field("50, -30, 80")
    assert err.value.code == "DF021" and "'50, -30, 80'" in err.value.problems[0].found


def test_base_follows_the_series_when_it_does_not_fit(demo: Workspace):
    # A calendar year is not whole fiscal years (July start): the fiscal series gets its
    # own last actual (final) fiscal year, not a proposed out-year.
    assert view.base_after_series_change(demo, "Bus operations", "2024") == "FY2026"
    assert view.base_after_series_change(demo, "Bus operations", "FY2025") is None
    assert view.base_after_series_change(demo, "Apparel revenue", "2024") is None
    assert view.base_after_series_change(demo, "Apparel revenue", "nonsense") == "2025"
    # a fiscal-year base fits a monthly series once the workspace has a fiscal year
    assert view.base_after_series_change(demo, "Apparel revenue", "FY2025") is None
    assert view.base_after_series_change(demo, "Apparel revenue", "2024-25") is None


def test_a_choice_is_kept_while_it_is_offered():
    options = [{"label": "A", "value": "a"}, {"label": "B", "value": "b"}]
    assert view.choose("b", options, "a") == "b"
    assert view.choose("gone", options, "b") == "b"  # the saved choice next
    assert view.choose("gone", options, "also gone") == "a"  # else the first offered
    assert view.choose("a", []) is None


def test_the_base_field_shows_the_typed_base_else_the_saved_one(small: Workspace):
    saved = dataclasses.replace(small, settings={"base": "2023"})
    assert view.shown_base(saved, "2024") == "2024"
    assert view.shown_base(saved, None) == "2023" and view.shown_base(saved, "") == "2023"
    assert view.shown_base(small, None) == ""


def test_problems_are_plain_data_with_the_fix_in_the_dashboards_words():
    with pytest.raises(RealbasisError) as err:
        view.pick_index(Workspace("w", "w"), "Missing index")
    (d,) = view.error_dicts(err.value)
    assert d["code"] == "UI005" and "Missing index" in d["message"]
    assert d["fix"].startswith("Choose another deflator") and isinstance(d["where_text"], str)


def test_add_intake_files_indexes_by_vintage_and_money_by_name(small: Workspace):
    newer = monthly_series("Index A", [1.0, 2.0], kind="index", vintage="2025-06-30")
    money = monthly_series("Costs", [5.0, 6.0])
    ws, summary = view.add_intake(small, [newer, money])
    assert set(ws.indexes["Index A"]) == {"2024-12-31", "2025-06-30"}
    assert set(ws.series) == {"Sales", "Costs"}
    assert summary.startswith("Added 1 money series and 1 index series")
    assert view.pick_index(ws, "Index A").vintage == "2025-06-30"  # latest by default
