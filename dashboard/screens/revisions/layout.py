"""The Revisions page (pure: no data; the callbacks fill it)."""

from __future__ import annotations

from dash import dcc, html

from ... import ids
from ...components import cautions_view, dropdown, field, screen
from ...figures import empty_figure


def layout() -> html.Div:
    controls = html.Div([
        field("Index", dropdown(ids.RV_INDEX, placeholder="An index with two or more vintages"),
              ids.RV_INDEX),
        field("Earlier vintage", dropdown(ids.RV_OLD), ids.RV_OLD),
        field("Later vintage", dropdown(ids.RV_NEW), ids.RV_NEW),
        field("Series", dropdown(ids.RV_SERIES, placeholder="Choose a series"), ids.RV_SERIES),
        field("Base period", dcc.Input(id=ids.RV_BASE, type="text", debounce=True,
                                       placeholder="e.g. 2024, FY2025",
                                       className="rb-input"),
              ids.RV_BASE),
    ], className="rb-controls")
    return screen(
        "Revisions",
        "Preliminary index values are revised. Compare two vintages of an index and see "
        "which real figures moved, and by how much.",
        controls,
        html.Div(id=ids.RV_SUMMARY, role="status"),
        dcc.Loading(dcc.Graph(id=ids.RV_FIGURE, figure=empty_figure("Loading…"),
                              config={"displaylogo": False, "responsive": True},
                              className="rb-graph", style={"height": "460px"}), type="dot"),
        html.Div(id=ids.RV_TABLE),
        html.Div(id=ids.RV_WARNINGS),
        html.Div(id=ids.RV_METHOD),
        cautions_view(),
    )
