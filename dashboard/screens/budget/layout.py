"""The Budget table page (pure: no data; the callbacks fill it)."""

from __future__ import annotations

from dash import dcc, html

from pipeline.model import Workspace

from ... import ids
from ...components import cautions_view, dropdown, field, progress_with_cancel, screen
from ...figures import empty_figure
from .._shared.view import frequency_options, interpolation_switch, period_placeholder
from .view import FORMATS, GIVEN


def _button(label: str, id_: str, primary: bool = False) -> html.Button:
    return html.Button(label, id=id_, n_clicks=0, type="button",
                       className="rb-button" + (" rb-primary" if primary else ""))


def layout() -> html.Div:
    controls = html.Div([
        field("Programs", dropdown(ids.BT_PROGRAMS, multi=True,
                                   placeholder="Choose the programs"), ids.BT_PROGRAMS,
              wide=True),
        field("Deflator",
              html.Div([dropdown(ids.BT_DEFLATOR, placeholder="Choose a price index"),
                        interpolation_switch(ids.BT_INTERP)]),
              ids.BT_DEFLATOR, wide=True,
              hint="Only the indexes that can deflate every program (and reach every "
                   "outlay year) are offered; the others say why."),
        field("Base year", dcc.Input(id=ids.BT_BASE, type="text", debounce=True,
                                     placeholder=period_placeholder(None),
                                     className="rb-input"), ids.BT_BASE,
              hint="Constant dollars of this year; empty = the last full year."),
        # the value must be among the options from the start: a dropdown clears a value it
        # does not offer, and that clearing would run the screen's callbacks while hidden
        field("Show as", dcc.Dropdown(id=ids.BT_FREQ, options=frequency_options(Workspace("", ""), None)[:1], value="auto",
                                      clearable=False, className="rb-dropdown"), ids.BT_FREQ),
        field("The amounts are", dcc.RadioItems(
            id=ids.BT_GIVEN, value="then-year", className="rb-radio",
            inputStyle={"marginRight": "6px"},
            options=[{"label": words, "value": key} for key, words in GIVEN.items()]),
            ids.BT_GIVEN, wide=True),
        html.Div([_button("Save these choices to the workspace", ids.BT_SAVE),
                  html.Span(id=ids.BT_SAVED, role="status")], className="rb-field",
                 style={"flex": "0 1 auto"}),
    ], className="rb-controls")
    outlay = html.Details([
        html.Summary("Outlay rates: authority spent over several years"),
        html.P("Budget authority granted in a year is often spent over that year and the "
               "following ones. Give a program's outlay rates (the percent spent in the year "
               "of authority, the next year, …, adding up to 100) and each year's share is "
               "deflated by that year's index: real(t) = Σ r_k × amount(t) × I(base) / "
               "I(t+k).", className="rb-hint"),
        html.Div([
            field("Program", dropdown(ids.BT_OUTLAY_PROGRAM, placeholder="Choose a program"),
                  ids.BT_OUTLAY_PROGRAM),
            field("Outlay rates (% spent each year)",
                  dcc.Input(id=ids.BT_OUTLAY, type="text", inputMode="decimal",
                            placeholder="e.g. 50, 30, 20", className="rb-input"),
                  ids.BT_OUTLAY, hint="Empty = each year's amount deflated by that year's "
                  "index."),
            html.Div(_button("Save outlay rates", ids.BT_OUTLAY_SAVE), className="rb-field"),
        ], className="rb-controls"),
        html.Div(id=ids.BT_OUTLAY_MESSAGE, role="status"),
        html.Div(id=ids.BT_OUTLAY_SAVED),
    ], className="rb-details", open=True)
    downloads = html.Div([
        _button(f"Download: {FORMATS['csv']}", ids.BT_DL_CSV),
        _button(f"Download: {FORMATS['xlsx']}", ids.BT_DL_XLSX),
        progress_with_cancel(ids.BT_DL_PROGRESS, ids.BT_DL_CANCEL),
        html.Div(id=ids.BT_DL_STATUS, role="status", **{"aria-live": "polite"}),
        dcc.Download(id=ids.BT_DOWNLOAD),
    ], className="rb-actions", style={"display": "flex", "gap": "8px", "flexWrap": "wrap",
                                      "alignItems": "center"})
    return screen(
        "Budget table",
        "Every program by year, side by side in then-year dollars and constant dollars of "
        "the base year you choose, with totals, real growth year on year and over the whole "
        "span; proposed out-years are marked projected.",
        controls,
        html.Div(id=ids.BT_DEFLATOR_WHY),
        outlay,
        html.H3(id=ids.BT_TITLE, className="rb-result-title"),
        html.Div(id=ids.BT_SUMMARY),
        dcc.Loading(html.Div(id=ids.BT_TABLE), type="dot"),
        downloads,
        dcc.Graph(id=ids.BT_FIGURE, figure=empty_figure("Loading…"),
                  config={"displaylogo": False, "responsive": True},
                  className="rb-graph", style={"height": "420px"}),
        html.Div(id=ids.BT_WARNINGS),
        html.Div(id=ids.BT_METHOD),
        cautions_view(),
    )
