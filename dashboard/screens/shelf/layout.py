"""The Deflator shelf page (pure: no data; the callbacks fill it)."""

from __future__ import annotations

from dash import dcc, html

from ... import ids
from ...components import cautions_view, dropdown, field, method_view, screen
from ...figures import empty_figure
from .view import COST_METHODS

SHELF_RULES = (
    "An index may be held in several vintages (as-of dates); the latest is used unless a "
    "screen asks for another (Revisions).",
    "Rebase: I'(t) = 100 × I(t) / mean of I over the new base period; percent changes do "
    "not move.",
    "Link: from the overlap on, I(t) = I_new(t) × I_old(o) / I_new(o); before it the older "
    "segment.",
    "Project: each projected year grows at the assumed rate in percent a year; projected "
    "values are flagged and drawn dashed wherever they are used.",
    "Periods are read with the workspace's fiscal year (Data intake): FY2025 and 2024-25 "
    "are the same fiscal year.",
    "Own cost index: component indexes blended with yearly spending weights (fixed weights, "
    "annual chain, or chained Törnqvist).",
    "Any value resting on a preliminary or projected value keeps that status.",
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
        field("Assumed rate (% a year)", dcc.Input(id=ids.SH_PROJECT_RATE, type="text",
                                                   inputMode="decimal", placeholder="e.g. 2.5",
                                                   className="rb-input"), ids.SH_PROJECT_RATE,
              hint="Percent a year: 2.5 (or 2.5 %) is 2.5 % a year; -1 a fall of 1 % a year."),
        field("Project until", dcc.Input(id=ids.SH_PROJECT_UNTIL, type="text",
                                         placeholder="e.g. 2030 or FY2030",
                                         className="rb-input"), ids.SH_PROJECT_UNTIL,
              hint="The last out-year the index must reach."),
        html.Div(_button("Project", ids.SH_PROJECT), className="rb-field"),
    ], className="rb-controls")])
    linking = html.Div([
        field("Older segment", dropdown(ids.SH_LINK_OLD, placeholder="Choose an index"),
              ids.SH_LINK_OLD),
        field("Newer segment", dropdown(ids.SH_LINK_NEW, placeholder="Choose an index"),
              ids.SH_LINK_NEW),
        field("Overlap", dcc.Input(id=ids.SH_LINK_OVERLAP, type="text",
                                   placeholder="empty = latest common period",
                                   className="rb-input"), ids.SH_LINK_OVERLAP,
              hint="A period both segments cover, e.g. 2020 or FY2021."),
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
                                             for k, w in COST_METHODS.items()],
                                    className="rb-dropdown"), ids.SH_COST_METHOD),
        field("Yearly weights (spending or shares)",
              dcc.Textarea(id=ids.SH_COST_WEIGHTS, className="rb-textarea",
                           placeholder="period,Goods,Wages\n2023,600,250\n2024,620,260"),
              ids.SH_COST_WEIGHTS, hint="A small table, one line per year: period, then one "
                                        "column per component (problems name the line)."),
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
