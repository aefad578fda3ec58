"""Deflator shelf: the price indexes of the workspace and what can be done with them.

Lists every index and vintage with its reference, span and preliminary/projected
stretches; draws chosen indexes; rebases, links two segments, projects out-years at an
assumed rate and blends an own cost index from components and yearly weights. Every
action calls the engine (pipeline.indexes, pipeline.projection, pipeline.costindex) and
adds a NEW index to the workspace, leaving the original as it was.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from dash import Dash, Input, Output, State, ctx, dcc, html, no_update

from pipeline.errors import RealbasisError
from pipeline.model import Workspace

from .. import ids, logic
from ..components import (
    Column,
    cautions_view,
    dropdown,
    field,
    method_view,
    notice,
    problems_view,
    screen,
    table,
)
from ..data import DataAccess, WorkspaceRef
from ..figures import empty_figure, index_figure

KEY = "shelf"
TITLE = "Deflator shelf"
ORDER = 20

SHELF_RULES = (
    "An index may be held in several vintages (as-of dates); the latest is used unless a "
    "screen asks for another (Revisions).",
    "Rebase: I'(t) = 100 × I(t) / mean of I over the new base period; percent changes do "
    "not move.",
    "Link: from the overlap on, I(t) = I_new(t) × I_old(o) / I_new(o); before it the older "
    "segment.",
    "Project: each projected year grows at the assumed annual rate; projected values are "
    "flagged and drawn dashed wherever they are used.",
    "Own cost index: component indexes blended with yearly spending weights (fixed weights, "
    "annual chain, or chained Törnqvist).",
    "Any value resting on a preliminary or projected value keeps that status.",
)

SHELF_COLUMNS = (
    Column("name", "Index"),
    Column("vintage", "Vintage (as of)"),
    Column("latest", "Used by default"),
    Column("frequency", "Frequency"),
    Column("reference", "Reference"),
    Column("span", "Periods"),
    Column("status", "Preliminary / projected"),
)


def _button(label: str, id_: str) -> html.Button:
    return html.Button(label, id=id_, n_clicks=0, type="button", className="rb-button")


def layout() -> html.Div:
    # one row per action, so it is clear which inputs each button uses
    rebase_project = html.Div([html.Div([
        field("Index to work on", dropdown(ids.SH_TARGET, placeholder="Choose an index"),
              ids.SH_TARGET, wide=True),
    ], className="rb-controls"), html.Div([
        field("New base period", dcc.Input(id=ids.SH_REBASE_BASE, type="text",
                                           placeholder="e.g. 2024 or FY2025",
                                           className="rb-input"), ids.SH_REBASE_BASE),
        html.Div(_button("Rebase", ids.SH_REBASE), className="rb-field"),
    ], className="rb-controls"), html.Div([
        field("Assumed rate (% a year)", dcc.Input(id=ids.SH_PROJECT_RATE, type="number",
                                                   step=0.1, placeholder="e.g. 2.5",
                                                   className="rb-input"), ids.SH_PROJECT_RATE),
        field("Project until", dcc.Input(id=ids.SH_PROJECT_UNTIL, type="text",
                                         placeholder="e.g. 2030 or FY2030",
                                         className="rb-input"), ids.SH_PROJECT_UNTIL),
        html.Div(_button("Project", ids.SH_PROJECT), className="rb-field"),
    ], className="rb-controls")])
    linking = html.Div([
        field("Older segment", dropdown(ids.SH_LINK_OLD, placeholder="Choose an index"),
              ids.SH_LINK_OLD),
        field("Newer segment", dropdown(ids.SH_LINK_NEW, placeholder="Choose an index"),
              ids.SH_LINK_NEW),
        field("Overlap", dcc.Input(id=ids.SH_LINK_OVERLAP, type="text",
                                   placeholder="empty = latest common period",
                                   className="rb-input"), ids.SH_LINK_OVERLAP),
        html.Div(_button("Link", ids.SH_LINK), className="rb-field"),
    ], className="rb-controls")
    cost = html.Div([
        field("Name", dcc.Input(id=ids.SH_COST_NAME, type="text", value="Own cost index",
                                className="rb-input", maxLength=120), ids.SH_COST_NAME),
        field("Component indexes", dropdown(ids.SH_COST_COMPONENTS, multi=True,
                                            placeholder="Choose two or more indexes"),
              ids.SH_COST_COMPONENTS, wide=True),
        field("Blend", dcc.Dropdown(id=ids.SH_COST_METHOD, value="tornqvist", clearable=False,
                                    options=[{"label": w, "value": k}
                                             for k, w in logic.COST_METHODS.items()],
                                    className="rb-dropdown"), ids.SH_COST_METHOD),
        field("Yearly weights (spending or shares)",
              dcc.Textarea(id=ids.SH_COST_WEIGHTS, className="rb-textarea",
                           placeholder="period,Goods,Wages\n2023,600,250\n2024,620,260"),
              ids.SH_COST_WEIGHTS, hint="A small table: period, then one column per component."),
        html.Div(_button("Build the cost index", ids.SH_COST_BUILD), className="rb-field"),
    ], className="rb-controls")
    return screen(
        "Deflator shelf",
        "The price indexes in this workspace, with their vintage, reference period and the "
        "stretches that are preliminary or projected. Actions add a new index and keep the "
        "original.",
        html.Div(id=ids.SH_TABLE),
        field("Draw", dropdown(ids.SH_INDEX, multi=True, placeholder="Indexes to draw"),
              ids.SH_INDEX),
        dcc.Loading(dcc.Graph(id=ids.SH_FIGURE, figure=empty_figure("Loading…"),
                              config={"displaylogo": False, "responsive": True},
                              className="rb-graph", style={"height": "460px"}), type="dot"),
        html.Div(id=ids.SH_MESSAGE, role="status"),
        html.Details([html.Summary("Rebase or project an index"), rebase_project],
                     className="rb-details", open=True),
        html.Details([html.Summary("Link two index segments"), linking], className="rb-details"),
        html.Details([html.Summary("Build an own cost index"), cost], className="rb-details"),
        html.Div(method_view(SHELF_RULES, title="How the shelf works"), id=ids.SH_METHOD),
        cautions_view(),
    )


def outputs(ws: Workspace, drawn: list[str] | None) -> tuple[Any, Any, list[Any], list[Any]]:
    """Shelf table, figure, and the options for every index picker."""
    rows = logic.shelf_rows(ws)
    opts = logic.index_options(ws)
    names = [o["value"] for o in opts]
    chosen = [n for n in (drawn or []) if n in names] or names[:3]
    fig = (index_figure(logic.figure_items(ws, chosen), title="")
           if chosen else empty_figure("No price index in this workspace yet."))
    return (table(SHELF_COLUMNS, rows, caption="Price indexes in this workspace",
                  empty="No price index yet: upload one on the intake screen."),
            fig, opts, chosen)


def act(data: DataAccess, ref: WorkspaceRef, action: Callable[[Workspace], tuple[Workspace, list[str]]],
        what: str) -> tuple[WorkspaceRef | None, Any, Any]:
    """Run one shelf action and save; returns (new ref, message, method note)."""
    try:
        ws = data.load(ref)
        new_ws, lines = action(ws)
        saved = data.save(new_ws, action=what)
    except RealbasisError as err:
        return None, problems_view(logic.error_dicts(err), title="Not done"), None
    return (WorkspaceRef(saved.id, saved.version),
            notice(f"{lines[0]} Saved as version {saved.version:,}.", "ok"),
            method_view(lines, title="What was done"))


def register(app: Dash) -> None:
    from ..context import context

    rb = context(app)

    @app.callback(
        Output(ids.SH_TABLE, "children"), Output(ids.SH_FIGURE, "figure"),
        Output(ids.SH_INDEX, "options"), Output(ids.SH_INDEX, "value"),
        Output(ids.SH_TARGET, "options"), Output(ids.SH_LINK_OLD, "options"),
        Output(ids.SH_LINK_NEW, "options"), Output(ids.SH_COST_COMPONENTS, "options"),
        Output(ids.SH_COST_WEIGHTS, "value"),
        Input(ids.WORKSPACE, "data"), Input(ids.SH_INDEX, "value"),
        State(ids.SH_COST_WEIGHTS, "value"),
    )
    def _shelf(ref: Any, drawn: Any, weights: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        table_, fig, opts, chosen = outputs(ws, drawn)
        return (table_, fig, opts, chosen, opts, opts, opts, opts,
                weights or str(ws.settings.get("cost_weights") or ""))

    @app.callback(
        Output(ids.WORKSPACE, "data", allow_duplicate=True),
        Output(ids.SH_MESSAGE, "children"), Output(ids.SH_METHOD, "children"),
        Input(ids.SH_REBASE, "n_clicks"), Input(ids.SH_PROJECT, "n_clicks"),
        Input(ids.SH_LINK, "n_clicks"), Input(ids.SH_COST_BUILD, "n_clicks"),
        State(ids.SH_TARGET, "value"), State(ids.SH_REBASE_BASE, "value"),
        State(ids.SH_PROJECT_RATE, "value"), State(ids.SH_PROJECT_UNTIL, "value"),
        State(ids.SH_LINK_OLD, "value"), State(ids.SH_LINK_NEW, "value"),
        State(ids.SH_LINK_OVERLAP, "value"),
        State(ids.SH_COST_NAME, "value"), State(ids.SH_COST_COMPONENTS, "value"),
        State(ids.SH_COST_WEIGHTS, "value"), State(ids.SH_COST_METHOD, "value"),
        State(ids.WORKSPACE, "data"), prevent_initial_call=True,
    )
    def _act(_r: Any, _p: Any, _l: Any, _c: Any, target: Any, base: Any, rate: Any,
             until: Any, old: Any, new: Any, overlap: Any, cname: Any, comps: Any,
             weights: Any, method: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        trigger = ctx.triggered_id
        actions: dict[str, tuple[Callable[[Workspace], tuple[Workspace, list[str]]], str]] = {
            ids.SH_REBASE: (lambda ws: logic.rebase_index(ws, target, base), "rebased an index"),
            ids.SH_PROJECT: (lambda ws: logic.project_index(ws, target, rate, until),
                             "projected an index"),
            ids.SH_LINK: (lambda ws: logic.link_indexes(ws, old, new, overlap),
                          "linked two index segments"),
            ids.SH_COST_BUILD: (lambda ws: logic.build_cost_index(
                ws, cname, comps or [], weights, method, rb.settings), "built an own cost index"),
        }
        if r is None or trigger not in actions:
            return no_update, no_update, no_update
        if trigger != ids.SH_COST_BUILD and trigger != ids.SH_LINK and not target:
            return no_update, notice("Choose the index to work on first.", "warn"), no_update
        new_ref, message, method_note = act(rb.data, r, *actions[trigger])
        return (new_ref.as_dict() if new_ref else no_update), message, method_note
