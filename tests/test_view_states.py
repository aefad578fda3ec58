"""Honest states as users met them (issue 12, items 5 and 7), without a browser: gaps are
kept in every chart and named, user text is escaped in every chart, a workspace switch
drops a base that does not apply, one dated copy of the demo per session, the shelf links
older vintages and never replaces an index, a total names its series, a problem is said
once. The browser side is tests/test_browser_states.py. All data invented."""

from __future__ import annotations

import dataclasses
import datetime as dt
from typing import Any

import pandas as pd
import pytest
from conftest import monthly_series

from dashboard import components, figures
from dashboard.data import DataAccess, WorkspaceRef, demo_copy_name, is_demo_copy, saved_words
from dashboard.screens._shared import view as shared
from dashboard.screens.real import view as real_view
from dashboard.screens.revisions import view as rev_view
from dashboard.screens.shelf import view as shelf_view
from dashboard.screens.spread import view as spread_view
from pipeline.model import Workspace

EVIL = "<a href='https://example.org'>x</a> <b>bold</b>"
NAN = float("nan")


def _texts(fig: Any) -> list[str]:
    """Every text plotly renders from a figure: trace names, hover templates and custom
    data, titles, axis titles and tick texts, annotations (the figure's JSON walked)."""
    out: list[str] = []

    def walk(node: Any, key: str = "") -> None:
        if isinstance(node, dict):
            for k, v in node.items():
                walk(v, k)
        elif isinstance(node, list | tuple):
            for v in node:
                walk(v, key)
        elif isinstance(node, str) and key in ("name", "text", "hovertemplate", "customdata",
                                               "ticktext", "annotation_text"):
            out.append(node)

    walk(fig.to_plotly_json())
    return out


def _markup_free(fig: Any) -> None:
    texts = _texts(fig)
    assert texts, "the figure carries no text at all"
    for t in texts:
        for tag in ("<a", "<b>", "</a", "</b"):
            assert tag not in t, f"raw markup {tag!r} reaches plotly in {t!r}"


def _gapped() -> Workspace:
    """A money series with two months missing inside (2023-05, 2023-06) and one index."""
    values = [100.0 + i for i in range(24)]
    values[4] = values[5] = NAN
    nominal = monthly_series("Sales", values)
    idx = monthly_series("Index A", [100.0 + i / 2 for i in range(24)], kind="index",
                         unit="index", vintage="2024-12-31")
    old = monthly_series("Index A", [99.0 + i / 2 for i in range(24)], kind="index",
                         unit="index", vintage="2024-06-30",
                         status=["final"] * 18 + ["preliminary"] * 6)
    return Workspace("g1", "gapped", 1, series={"Sales": nominal},
                     indexes={"Index A": {"2024-12-31": idx, "2024-06-30": old}})


def _scatter_y(fig: Any, name_part: str) -> list[Any]:
    tr = next(t for t in fig.data if t.type == "scatter" and name_part in (t.name or ""))
    assert tr.connectgaps is False, f"{tr.name} would bridge a gap"
    return list(tr.y)


# --------------------------------------------------------------------------- gaps


def test_real_terms_breaks_the_line_at_missing_months_and_names_them():
    ws = _gapped()
    _title, fig, warn, _growth, _method = real_view.outputs(ws, "Sales", "Index A", "2023",
                                                            "auto", False)
    y = _scatter_y(fig, "Nominal")
    x = list(fig.data[0].x)
    assert "2023-05" in x and "2023-06" in x  # the empty months keep their place
    assert y[x.index("2023-05")] is None and y[x.index("2023-06")] is None
    assert y[x.index("2023-04")] is not None and y[x.index("2023-07")] is not None
    notes = str(warn.to_plotly_json())
    assert "DF011" in notes and "2023-05" in notes  # the gap is named in the notes


def test_spread_keeps_a_period_empty_under_every_deflator():
    # pivot_table would drop a period with no value under any deflator and the lines would
    # bridge it; the figure keeps it as a gap
    table = pd.DataFrame({
        "series": "S", "deflator": ["A"] * 4 + ["B"] * 4,
        "period": ["2020", "2021", "2022", "2023"] * 2,
        "nominal": [1.0, NAN, 3.0, 4.0] * 2, "real": [1.0, NAN, 3.0, 4.0, 2.0, NAN, 2.5, 3.0],
        "status": "final"})
    fig = figures.spread_figure(table, title="t", unit="USD")
    for name in ("A", "B", "Nominal"):
        tr = next(t for t in fig.data if t.name == name)
        assert list(tr.x) == ["2020", "2021", "2022", "2023"] and tr.y[1] is None
        assert tr.connectgaps is False


def test_spread_screen_keeps_the_gap():
    ws = _gapped()
    out = spread_view.outputs(ws, "Sales", ["Index A"], "2023", "auto", "yoy")
    fig = out[2]
    y = _scatter_y(fig, "Index A")
    x = list(next(t for t in fig.data if t.name == "Index A").x)
    assert y[x.index("2023-05")] is None
    assert "DF011" in str([o.to_plotly_json() for o in out if hasattr(o, "to_plotly_json")])


def test_revisions_chart_keeps_the_gap():
    ws = _gapped()
    out = rev_view.outputs(ws, "Index A", "2024-06-30", "2024-12-31", "Sales", "2023")
    fig = next(o for o in out if hasattr(o, "data") and len(o.data))
    tr = next(t for t in fig.data if t.type == "scatter")
    assert tr.connectgaps is False
    x = list(tr.x)
    assert "2023-05" in x and tr.y[x.index("2023-05")] is None
    assert "DF011" in str(out[3].to_plotly_json())  # the gap named in the notes


def test_shelf_chart_keeps_a_missing_index_value_empty():
    idx = monthly_series("Gappy index", [100.0, 101.0, NAN, 103.0], kind="index", unit="index")
    ws = Workspace("s", "s", 1, indexes={"Gappy index": {"": idx}})
    fig = shelf_view.outputs(ws, ["Gappy index"])[1]
    tr = fig.data[0]
    assert tr.connectgaps is False and tr.y[2] is None and len(tr.x) == 4


def test_every_line_of_every_builder_keeps_gaps():
    levels = pd.DataFrame({"P": [1.0, NAN, 3.0], "total": [1.0, NAN, 3.0],
                           "residual": [0.0, NAN, 0.0]}, index=["2020", "2021", "2022"])
    fig = figures.total_figure(levels, parts=["P"], part_status={}, total_status=["final"] * 3,
                               title="t", unit="USD", total_label="Total",
                               residual_note="residual")
    for tr in fig.data:
        assert tr.connectgaps is False, tr.name


# --------------------------------------------------------------------------- escaping


def test_user_text_is_escaped_in_every_chart():
    # plotly renders a small HTML subset (links, bold) in names, titles, hover and
    # annotations; user text must show as typed (common practice: escape at the boundary)
    table = pd.DataFrame({"period": ["2020", "2021"], "nominal": [1.0, 2.0],
                          "real": [1.0, 1.5], "status": ["final", "projected"]})
    _markup_free(figures.real_terms_figure(table, title=EVIL, unit=EVIL, real_label=EVIL,
                                           nominal_label=EVIL))
    spread = table.assign(series="S", deflator=EVIL)
    _markup_free(figures.spread_figure(spread, title=EVIL, unit=EVIL))
    _markup_free(figures.index_figure([{"name": EVIL, "x": ["2020-01-01", "2021-01-01"],
                                        "labels": ["2020", "2021"], "y": [1.0, 2.0],
                                        "status": ["preliminary", "projected"]}], title=EVIL))
    rev = pd.DataFrame({"period": ["2020", "2021"], "real_old": [1.0, 2.0],
                        "real_new": [1.1, 2.1], "status_old": ["final", "preliminary"],
                        "status_new": ["final", "final"]})
    _markup_free(figures.revisions_figure(rev, title=EVIL, unit=EVIL, old_label=EVIL,
                                          new_label=EVIL))
    _markup_free(figures.empty_figure(EVIL))
    fig = figures.real_terms_figure(table, title="", unit="USD", real_label=EVIL)
    names = [t.name for t in fig.data]
    assert "&lt;a href='https://example.org'&gt;x&lt;/a&gt; &lt;b&gt;bold&lt;/b&gt;" in names


def test_series_named_as_markup_is_escaped_on_real_terms_and_the_shelf():
    ws = _gapped()
    s = dataclasses.replace(ws.series["Sales"], name=EVIL)
    i = {k: dataclasses.replace(v, name=EVIL) for k, v in ws.indexes["Index A"].items()}
    evil_ws = dataclasses.replace(ws, series={EVIL: s}, indexes={EVIL: i})
    _title, fig, *_ = real_view.outputs(evil_ws, EVIL, EVIL, "2023", "auto", False)
    _markup_free(fig)
    _markup_free(shelf_view.outputs(evil_ws, [EVIL])[1])


def test_preliminary_and_projected_labels_never_share_a_line():
    # a one-period preliminary stretch just before a one-period projected one: the
    # labels sit on different lines (yshift), left and right of their stretches
    table = pd.DataFrame({"period": ["2020", "2021", "2022"], "nominal": [1.0, 2.0, 3.0],
                          "real": [1.0, 2.0, 3.0],
                          "status": ["final", "preliminary", "projected"]})
    fig = figures.real_terms_figure(table, title="", unit="USD", real_label="Real")
    ann = {a.text: a for a in fig.layout.annotations}
    pre, pro = ann["preliminary index"], ann["projected"]
    assert (pre.yshift or 0) != (pro.yshift or 0)
    assert pre.xanchor == "left" and pro.xanchor == "right"


def test_shelf_legend_sits_under_the_plot():
    fig = shelf_view.outputs(_gapped(), ["Index A"])[1]
    legend = fig.layout.legend
    assert legend.yref == "container" and legend.yanchor == "bottom" and legend.y < 0.05
    assert fig.layout.margin.b >= 85  # room for the axis labels and the legend under them


# --------------------------------------------------------------------------- workspace switch


def test_a_base_typed_in_one_workspace_does_not_follow_into_an_empty_one():
    empty = Workspace("e", "empty", 1)
    assert shared.shown_base(empty, "FY2026", None) == ""
    assert shared.shown_base(empty, "FY2026", "Sales") == ""


def test_a_base_is_kept_while_it_fits_the_chosen_series(small: Workspace):
    assert shared.shown_base(small, "2024", "Sales") == "2024"
    # outside the series' months (2023-01..2024-12): the saved base, else nothing
    assert shared.shown_base(small, "2030", "Sales") == ""
    saved = dataclasses.replace(small, settings={"base": "2023"})
    assert shared.shown_base(saved, "2030", "Sales") == "2023"
    assert shared.shown_base(saved, None, "Sales") == "2023"
    assert shared.shown_base(saved, "", None) == "2023"


def test_budget_base_follows_the_same_rule(demo: Workspace):
    from dashboard.screens.budget import view as budget_view

    empty = Workspace("e", "empty", 1)
    assert budget_view.options_for(empty, None, "FY2026")[3] == ""
    assert budget_view.options_for(demo, None, "FY2026")[3] == "FY2026"


# --------------------------------------------------------------------------- demo copy


def _demo_change(access: DataAccess, series: str) -> Workspace:
    demo = access.load(access.demo_ref())
    return real_view.save_choices(demo, series, "Chained consumer index", "2023", "auto", False)


def test_changes_to_the_demo_go_to_one_dated_copy_per_session(access: DataAccess):
    demo = access.load(access.demo_ref())
    first = access.save(_demo_change(access, "Footwear revenue"), action="choices")
    second = access.save(_demo_change(access, "Apparel revenue"), action="choices")
    assert first.id == second.id != demo.id  # one copy, not one per change
    assert second.version == first.version + 1
    assert first.name == demo_copy_name(dt.date.today()) and is_demo_copy(first.name)
    copies = [i for i in access.store.list() if is_demo_copy(i.name)]
    assert len(copies) == 1
    assert access.load(WorkspaceRef(demo.id, 0)).version == demo.version  # demo unchanged
    # the user is told where the change went, and that the demo is as it was
    words = saved_words(demo, first)
    assert first.name in words and "shared demo is left as it was" in words
    assert "started again from the demo" in saved_words(demo, second)
    assert saved_words(first, second).startswith("Saved as version")
    assert demo_copy_name(dt.date(2026, 12, 3)) == "My copy of the demo, 3 Dec 2026 (illustrative)"


def test_another_session_gets_its_own_copy(access: DataAccess):
    from pipeline.store import AccessContext, access_context

    first = access.save(_demo_change(access, "Footwear revenue"), action="choices")
    with access_context(AccessContext("editor", None, "editor", session="other-session")):
        other = access.save(_demo_change(access, "Footwear revenue"), action="choices")
    assert other.id != first.id


def test_the_header_says_a_copy_is_a_copy():
    label = str(components.workspace_label("My copy of the demo, 3 Dec 2026 (illustrative)", 2,
                                           demo_copy=True))
    assert "shared demo stays as it was" in label
    assert "shared demo" not in str(components.workspace_label("Mine", 2))


# --------------------------------------------------------------------------- shelf


def test_an_older_vintage_can_be_chosen_for_linking():
    ws = _gapped()
    opts = {o["value"]: o["label"] for o in shelf_view.link_options(ws)}
    older = "Index A" + shelf_view.VINTAGE_MARK + "2024-06-30"
    assert opts[older] == "Index A, older vintage 2024-06-30"
    assert "Index A" in opts  # the latest, by name
    new_ws, lines = shelf_view.link_indexes(ws, older, "Index A", "2023-12")
    name = "Index A (vintage 2024-06-30) linked with Index A"
    linked = shared.pick_index(new_ws, name)
    # I(t) = I_new(t) x I_old(o) / I_new(o) from the overlap on (ILO/IMF CPI Manual 2004,
    # ch. 9, linking): at the overlap the older level is kept
    o = pd.Period("2023-12", "M")
    assert linked.values[o] == pytest.approx(ws.indexes["Index A"]["2024-06-30"].values[o])
    assert "factor" in lines[0]


def test_relinking_under_a_taken_name_names_the_new_result(small: Workspace):
    ws, _ = shelf_view.link_indexes(small, "Index A", "Index B", "2024-12")
    again, lines = shelf_view.link_indexes(ws, "Index A", "Index B", "2024-06")
    assert "Index A linked with Index B" in again.indexes
    assert "Index A linked with Index B (2)" in again.indexes
    first = shared.pick_index(ws, "Index A linked with Index B")
    assert shared.pick_index(again, "Index A linked with Index B").values.equals(first.values)
    assert any("stays as it was" in line and "(2)" in line for line in lines)


def test_the_shelf_message_says_when_a_name_was_taken(access: DataAccess, small: Workspace):
    ws = access.create("relink")
    ws = access.save(dataclasses.replace(ws, series=small.series, indexes=small.indexes),
                     action="setup")
    ref, _msg, _ = shelf_view.run_action(access, WorkspaceRef(ws.id, ws.version), "link",
                                         old="Index A", new="Index B", overlap="2024-12")
    assert ref is not None
    _ref2, msg, _ = shelf_view.run_action(access, ref, "link", old="Index A", new="Index B",
                                         overlap="2024-12")
    text = str(msg.to_plotly_json())
    assert "Index A linked with Index B (2)" in text and "stays as it was" in text
    assert "Saved as version" in text
    # the same for a rebase under a name already there
    r1, _ = shelf_view.rebase_index(small, "Index A", "2024")
    r2, lines = shelf_view.rebase_index(r1, "Index A", "2024")
    assert "Index A (2024=100) (2)" in r2.indexes and "stays as it was" in " ".join(lines)


# --------------------------------------------------------------------------- totals, notes


def test_a_total_says_which_series_it_sums(demo: Workspace):
    key = next(o["value"] for o in shared.series_options(demo)
               if o["value"].startswith(shared.TOTAL) and "Bus operations" in o["label"])
    s = shared.pick_series(demo, key)
    assert s.name == ("Total of 4 series (Bus operations, Rail operations, Capital "
                      "maintenance and Paratransit services)")


def test_a_problem_reached_twice_is_shown_once():
    p = {"code": "DF011", "severity": "warning", "message": "'Sales' has no nominal value",
         "where_text": "series Sales"}
    view = str(components.problems_view([p, dict(p), {**p, "message": "other"}]).to_plotly_json())
    assert view.count("has no nominal value") == 1 and "0 error(s), 2 warning(s)" in view
    note = str(components.method_view(["a", "b", "a"]).to_plotly_json())
    assert note.count("<li>a</li>") == 1
