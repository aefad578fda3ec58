"""The Deflator spread page (pure: no data; the callbacks fill it)."""

from __future__ import annotations

from dash import dcc, html

from pipeline.compare import MEASURES
from pipeline.model import Workspace

from ... import ids
from ...components import cautions_view, dropdown, field, screen
from ...figures import empty_figure
from .._shared.view import (
    frequency_options,
    interpolation_switch,
    period_placeholder,
)


def layout() -> html.Div:
    controls = html.Div([
        field("Series", dropdown(ids.SP_SERIES, placeholder="Choose a series"), ids.SP_SERIES),
        field("Deflators to compare",
              html.Div([dropdown(ids.SP_DEFLATORS, multi=True, placeholder="Choose price indexes"),
                        interpolation_switch(ids.SP_INTERP)]),
              ids.SP_DEFLATORS, wide=True,
              hint="Only the indexes that can deflate this series are offered; the others "
                   "say why."),
        field("Base period", dcc.Input(id=ids.SP_BASE, type="text", debounce=True,
                                       placeholder=period_placeholder(None),
                                       className="rb-input"),
              ids.SP_BASE),
        field("Show as", dcc.Dropdown(id=ids.SP_FREQ, options=frequency_options(Workspace("", ""), None),
                                      value="auto",
                                      clearable=False, className="rb-dropdown"), ids.SP_FREQ),
        field("Growth measure", dcc.RadioItems(
            id=ids.SP_MEASURE, value="yoy", className="rb-radio",
            inline=True, inputStyle={"marginRight": "6px"},
            options=[{"label": f" {words}", "value": key}
                     for key, words in MEASURES.items()]), ids.SP_MEASURE, wide=True),
    ], className="rb-controls")
    return screen(
        "Deflator spread",
        "The same series deflated by each chosen price index: how far apart the real "
        "figures are, and whether real growth keeps its sign whichever index is used.",
        controls,
        html.Div(id=ids.SP_DEFLATOR_WHY),
        html.Div(id=ids.SP_VERDICT, className="rb-verdict", role="status",
                 **{"aria-live": "polite"}),
        html.H3(id=ids.SP_TITLE, className="rb-result-title"),
        dcc.Loading(dcc.Graph(id=ids.SP_FIGURE, figure=empty_figure("Loading…"),
                              config={"displaylogo": False, "responsive": True},
                              className="rb-graph", style={"height": "460px"}), type="dot"),
        html.Div(id=ids.SP_GROWTH),
        html.Div(id=ids.SP_WARNINGS),
        html.Div(id=ids.SP_METHOD),
        cautions_view(),
    )
