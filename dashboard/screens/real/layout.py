"""The Real terms page (pure: no data; the callbacks fill it)."""

from __future__ import annotations

from dash import dcc, html

from pipeline.model import Workspace

from ... import ids
from ...components import cautions_view, dropdown, field, progress_with_cancel, screen
from ...figures import empty_figure
from .._shared.view import (
    frequency_options,
    interpolation_switch,
    period_placeholder,
)
from .view import BASES, CHAINS, HIDDEN, SA_METHODS


def _choice(key: str, words: tuple[str, str]) -> dict[str, object]:
    return {"label": html.Span([html.Strong(words[0]), " — ", words[1]]), "value": key}


def parts_box() -> html.Div:
    """The total of parts' choices: a deflator per part (built by a callback, offering the
    deflators that can serve each part) and how the parts are put together."""
    return html.Div([
        html.H3("Each part's deflator", className="rb-subhead"),
        html.Div(id=ids.RT_PAIRS, className="rb-controls"),
        dcc.Store(id=ids.RT_PAIRS_STAMP, data=0),
        field("How the parts are put together",
              dcc.RadioItems(id=ids.RT_CHAIN, value="none", className="rb-radio",
                             options=[_choice(k, w) for k, w in CHAINS.items()],
                             inputStyle={"marginRight": "6px"}), ids.RT_CHAIN, wide=True),
    ], id=ids.RT_PARTS_BOX, hidden=True, className="rb-parts")


def contributions_box() -> html.Div:
    """Contributions to the total's real growth (a total of parts only)."""
    return html.Div([
        html.H3("Contributions to real growth", className="rb-subhead"),
        field("Growth measured", dcc.RadioItems(
            id=ids.RT_BASIS, value="period", inline=True, className="rb-radio",
            options=[{"label": w, "value": k} for k, w in BASES.items()],
            inputStyle={"marginRight": "6px"}, labelStyle={"marginRight": "16px"}),
            ids.RT_BASIS, wide=True),
        dcc.Loading(dcc.Graph(id=ids.RT_CONTRIB_FIGURE, figure=empty_figure(""),
                              config={"displaylogo": False, "responsive": True},
                              className="rb-graph", style={"height": "440px"}), type="dot"),
        html.Div(id=ids.RT_CONTRIB_TABLE),
    ], id=ids.RT_CONTRIB_BOX, style=HIDDEN)


def layout() -> html.Div:
    controls = html.Div([
        field("Series", dropdown(ids.RT_SERIES, placeholder="Choose a series"), ids.RT_SERIES),
        html.Div(field("Deflator",
                       html.Div([dropdown(ids.RT_DEFLATOR, placeholder="Choose a price index"),
                                 interpolation_switch(ids.RT_INTERP)]),
                       ids.RT_DEFLATOR, wide=True,
                       hint="Only the indexes that can deflate this series are offered; the "
                            "others say why."),
                 id=ids.RT_DEFLATOR_BOX, className="rb-field-box rb-field-wide"),
        field("Base period", dcc.Input(id=ids.RT_BASE, type="text", debounce=True,
                                       placeholder=period_placeholder(None),
                                       className="rb-input"), ids.RT_BASE,
              hint="One period or a range such as FY2025..FY2026; empty = last full year."),
        field("Show as", dcc.Dropdown(id=ids.RT_FREQ, options=frequency_options(Workspace("", ""), None),
                                      value="auto", clearable=False,
                                      className="rb-dropdown"), ids.RT_FREQ),
        field("Seasonal adjustment",
              dcc.Checklist(id=ids.RT_SA, options=[{"label": " Seasonally adjust (STL, after "
                                                            "deflation)", "value": "sa"}],
                            value=[], className="rb-check",
                            inline=True, inputStyle={"marginRight": "6px"}), ids.RT_SA),
        field("Outlay rates (% spent each year)",
              dcc.Input(id=ids.RT_OUTLAY, type="text", debounce=True, inputMode="decimal",
                        placeholder="e.g. 50, 30, 20", className="rb-input"), ids.RT_OUTLAY,
              hint="For budget authority spent over several years: the percent spent in "
                   "the year of authority, the next year, … (adding up to 100). Empty = "
                   "each year's amount deflated by that year's index."),
        html.Div([html.Button("Save these choices to the workspace", id=ids.RT_SAVE,
                              n_clicks=0, type="button", className="rb-button"),
                  html.Span(id=ids.RT_SAVED, role="status")], className="rb-field"),
    ], className="rb-controls")
    return screen(
        "Real terms",
        "A nominal series and the same series in constant dollars of the base period you "
        "choose, with growth split exactly into price and real growth.",
        controls,
        html.Div(id=ids.RT_DEFLATOR_WHY),
        html.Div(id=ids.RT_OUTLAY_STATE, role="status", className="rb-hint"),
        parts_box(),
        html.H3(id=ids.RT_TITLE, className="rb-result-title"),
        dcc.Loading(dcc.Graph(id=ids.RT_FIGURE, figure=empty_figure("Loading…"),
                              config={"displaylogo": False, "responsive": True},
                              className="rb-graph", style={"height": "460px"}), type="dot"),
        html.Div(id=ids.RT_WARNINGS),
        contributions_box(),
        html.Div(id=ids.RT_GROWTH),
        html.Div(id=ids.RT_METHOD),
        html.Details([
            html.Summary("Seasonally adjust every monthly and quarterly series (a background job)"),
            html.Div([
                field("Method", dcc.Dropdown(id=ids.RT_SA_METHOD, value="stl", clearable=False,
                                             options=[{"label": w, "value": k}
                                                      for k, w in SA_METHODS.items()],
                                             className="rb-dropdown"), ids.RT_SA_METHOD),
                html.Div(html.Button("Adjust them all", id=ids.RT_SA_ALL, n_clicks=0,
                                     type="button", className="rb-button"), className="rb-field"),
            ], className="rb-controls"),
            progress_with_cancel(ids.RT_SA_PROGRESS, ids.RT_SA_CANCEL),
            html.Div(id=ids.RT_SA_MESSAGE, role="status"),
        ], className="rb-details"),
        cautions_view(),
    )
