"""The Deflator shelf's view model (dashboard/screens/shelf/view.py), without a browser.

Rebasing, linking and projecting are checked against the textbook definitions cited
beside each check; the demo data is used only to exercise the screen.
"""

from __future__ import annotations

import dataclasses

import pandas as pd
import pytest
from dash import no_update

from dashboard.data import DataAccess, WorkspaceRef
from dashboard.screens._shared.view import pick_index
from dashboard.screens.shelf import view
from pipeline.errors import RealbasisError
from pipeline.model import Workspace


def test_shelf_rows_show_vintages_and_stretches(demo: Workspace):
    rows = [r for r in view.shelf_rows(demo) if r["name"] == "Chained consumer index"]
    assert {r["vintage"] for r in rows} == {"2026-10-15", "2026-04-15", "2025-10-15",
                                            "2025-04-15"}
    latest = next(r for r in rows if r["latest"] == "yes")
    assert latest["status"] == "preliminary 2025-11–2026-09"


def test_rebase_makes_the_base_average_100(small: Workspace):
    # I'(t) = 100 * I(t) / mean(I over the base period) (ILO/IMF CPI Manual 2004, ch. 9;
    # DESIGN.md): Index B averages 105 over 2024.
    ws, _lines = view.rebase_index(small, "Index B", "2024")
    s = pick_index(ws, "Index B (2024=100)")
    assert s.values["2024"].mean() == pytest.approx(100.0)
    assert s.values.iloc[0] == pytest.approx(100.0 * 100.0 / 105.0)
    assert "Index B" in ws.indexes  # the original is kept


def test_project_and_link_add_new_indexes(small: Workspace):
    ws, lines = view.project_index(small, "Index A", 2.0, "2025-12")
    p = pick_index(ws, "Index A projected at 2 % a year")
    assert p.values.index[-1] == pd.Period("2025-12", "M")
    assert p.status_or_final().iloc[-1] == "projected"
    # twelve projected months compound to the annual rate (pipeline.projection)
    assert p.values.iloc[-1] / p.values.iloc[-13] == pytest.approx(1.02)
    ws, lines = view.link_indexes(small, "Index A", "Index B", "2024-12")
    assert "factor" in lines[0]
    with pytest.raises(RealbasisError):
        view.project_index(small, "Index A", None, "2025")


def test_own_cost_index_from_components_and_weights(demo: Workspace):
    weights = str(demo.settings["cost_weights"])
    comps = ["Goods purchased", "Wages and benefits", "Rent and occupancy", "Freight and energy"]
    ws, lines = view.build_cost_index(demo, "Harbourline costs", comps, weights, "fixed")
    s = pick_index(ws, "Harbourline costs")
    assert s.kind == "index" and s.values.notna().sum() > 12
    assert any("Fixed weights" in line for line in lines)
    with pytest.raises(RealbasisError):
        view.build_cost_index(demo, "x", comps[:1], weights, "fixed")


def test_shelf_action_saves_a_new_version(access: DataAccess, small: Workspace):
    ws = access.create("shelf test")
    ws = access.save(dataclasses.replace(ws, series=small.series, indexes=small.indexes),
                     action="setup")
    ref, message, _method = view.act(access, WorkspaceRef(ws.id, ws.version),
                                     lambda w: view.rebase_index(w, "Index A", "2024"), "rebase")
    assert ref is not None and ref.version == ws.version + 1
    ref2, message, _ = view.act(access, WorkspaceRef(ws.id, ws.version),
                                 lambda w: view.rebase_index(w, "Index A", "1990"), "rebase")
    assert ref2 is None and "IX001" in str(message.to_plotly_json())


def test_index_pickers_name_the_vintage_used_when_several_are_held(demo: Workspace):
    # The demo holds several vintages of the chained consumer index; pickers act on the latest,
    # and the label must say which one (common practice: state the vintage used).
    opts = {o["value"]: o["label"] for o in view.index_options(demo)}
    assert opts["Chained consumer index"] == (
        "Chained consumer index (latest vintage, 2026-10-15)")
    assert opts["Fixed-basket consumer index"] == "Fixed-basket consumer index"
    items = view.figure_items(demo, ["Chained consumer index"])
    assert items[0]["name"] == "Chained consumer index (latest vintage, 2026-10-15)"


def test_shelf_actions_run_by_name_and_need_the_index_to_work_on(access: DataAccess,
                                                                  small: Workspace):
    ws = access.create("shelf actions")
    ws = access.save(dataclasses.replace(ws, series=small.series, indexes=small.indexes),
                     action="setup")
    ref = WorkspaceRef(ws.id, ws.version)
    new_ref, message, method = view.run_action(access, ref, "rebase", base="2024")
    assert new_ref is None and method is no_update
    assert "Choose the index to work on first" in str(message.to_plotly_json())
    new_ref, message, _method = view.run_action(access, ref, "link", old="Index A",
                                                new="Index B", overlap="2024-12")
    assert new_ref is not None and "Index A linked with Index B" in access.load(new_ref).indexes
    events = [e.detail.get("action") for e in access.store.audit(ws.id) if e.event == "save"]
    assert view.ACTIONS["link"] in events


def test_fiscal_periods_on_the_shelf(demo: Workspace):
    """Rebase a monthly index to FY2025 and project it until FY2030 with the workspace's
    July fiscal year: the rebased index averages 100 over July 2024 - June 2025 (ILO/IMF
    CPI Manual 2020, ch. 9: rebasing divides by the new base period's average); the
    projection reaches June 2030, the end of FY2030."""
    ws, lines = view.rebase_index(demo, "Chained consumer index", "FY2025")
    r = pick_index(ws, "Chained consumer index (FY2025=100)")
    assert r.values["2024-07":"2025-06"].mean() == pytest.approx(100.0)
    assert "July 2024 to June 2025" in lines[0]
    same, _ = view.rebase_index(demo, "Chained consumer index", "2024-25")
    assert pick_index(same, "Chained consumer index (FY2025=100)").values.equals(r.values)
    ws, lines = view.project_index(demo, "Chained consumer index", "2.5", "FY2030")
    p = pick_index(ws, "Chained consumer index projected at 2.5 % a year")
    assert p.values.index[-1] == pd.Period("2030-06", "M")
    assert any("Fiscal years start in July" in line for line in lines)
    # an overlap given as a fiscal year: I(t) = I_new(t) x I_old(o) / I_new(o) from o on
    ws, lines = view.link_indexes(demo, "Chained consumer index", "Fixed-basket consumer index",
                                  "FY2021")
    assert "Chained consumer index linked with Fixed-basket consumer index" in ws.indexes


def test_projection_rate_is_percent_a_year_and_answered_as_typed(small: Workspace):
    # the field says "% a year": 2.5 and 2.5 % are both 2.5 % a year (pipeline.projection
    # parse_rate with bare="percent")
    a, _ = view.project_index(small, "Index A", "2.5", "2025-12")
    b, _ = view.project_index(small, "Index A", "2.5 %", "2025-12")
    name = "Index A projected at 2.5 % a year"
    assert pick_index(a, name).values.equals(pick_index(b, name).values)
    # compounding: twelve months at (1.025)^(1/12) each (common practice)
    v = pick_index(a, name).values
    assert v.iloc[-1] / v.iloc[-13] == pytest.approx(1.025)
    with pytest.raises(RealbasisError) as err:
        view.project_index(small, "Index A", "250", "2025-12")
    p = err.value.problems[0]
    assert p.code == "WS202" and p.found.startswith("'250'")  # what was typed, not 2.5
    fix = view.error_dicts(err.value)[0]["fix"]
    assert "fraction" not in fix and "percent a year" in fix
    with pytest.raises(RealbasisError) as err:
        view.project_index(small, "Index A", "two", "2025-12")
    assert err.value.code == "WS206"


def test_typed_weights_are_located_by_line_of_the_box(demo: Workspace):
    comps = ["Goods purchased", "Wages and benefits"]
    weights = "period,Goods purchased,Wages and benefits\n2023,600,250\n2024,abc,260\n"
    with pytest.raises(RealbasisError) as err:
        view.build_cost_index(demo, "x", comps, weights, "fixed")
    shown = view.error_dicts(err.value)
    assert any("line 3" in d["where_text"] for d in shown)
    assert not any("weights.csv" in str(d) or "row " in d["where_text"] for d in shown)
