"""Revisions: two vintages of a price index and what moved in the real figures.

Uses :mod:`pipeline.revisions`: the index values revised between the vintages, then the
same series deflated with each vintage by the same method, period by period.
"""

from __future__ import annotations

from typing import Any

from dash import Dash, Input, Output, State, dcc, html, no_update

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
    warnings_view,
)
from ..data import WorkspaceRef
from ..figures import empty_figure, revisions_figure
from ._shared.callbacks import register_base_follows_series
from ._shared.view import choose

KEY = "revisions"
TITLE = "Revisions"
ORDER = 50

MOVED_COLUMNS = (
    Column("period", "Period"),
    Column("real_old", "Real, earlier vintage", "number", 1),
    Column("real_new", "Real, later vintage", "number", 1),
    Column("real_change", "Change", "number", 1),
    Column("real_change_pct", "Change (%)", "number", 2),
    Column("yoy_change_pp", "Change in growth on a year earlier (points)", "number", 2),
    Column("status_old", "Earlier status"),
    Column("status_new", "Later status"),
)


def layout() -> html.Div:
    controls = html.Div([
        field("Index", dropdown(ids.RV_INDEX, placeholder="An index with two or more vintages"),
              ids.RV_INDEX),
        field("Earlier vintage", dropdown(ids.RV_OLD), ids.RV_OLD),
        field("Later vintage", dropdown(ids.RV_NEW), ids.RV_NEW),
        field("Series", dropdown(ids.RV_SERIES, placeholder="Choose a series"), ids.RV_SERIES),
        field("Base period", dcc.Input(id=ids.RV_BASE, type="text", debounce=True,
                                       placeholder="e.g. 2024", className="rb-input"),
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


def options_for(ws: Workspace, index: Any, series: Any) -> tuple[Any, ...]:
    i_opts = logic.revisable_indexes(ws)
    s_opts = logic.series_options(ws)
    return i_opts, choose(index, i_opts), s_opts, choose(series, s_opts, ws.settings.get("series"))


def vintages_for(ws: Workspace, index: Any) -> tuple[Any, Any, Any]:
    opts = logic.vintage_options(ws, index)
    values = [o["value"] for o in opts]
    if len(values) < 2:
        return opts, None, None
    return opts, values[-2], values[-1]


def outputs(ws: Workspace, index: Any, old: Any, new: Any, series: Any, base: Any
            ) -> tuple[Any, Any, Any, Any, Any]:
    if not index or series is None or old is None or new is None:
        msg = ("This workspace has no index in two vintages yet: upload a later release on the "
               "intake screen." if not logic.revisable_indexes(ws) else
               "Choose an index, two vintages and a series.")
        return notice(msg, "info"), empty_figure(msg), None, None, method_view(())
    try:
        rv = logic.revisions(ws, index, old, new, series, base)
    except RealbasisError as err:
        return (notice("These figures cannot be computed.", "warn"),
                empty_figure("See the problems below."), None,
                problems_view(logic.error_dicts(err), title="Cannot compute"), method_view(()))
    fig = revisions_figure(rv.table, title="", unit=rv.unit,
                           old_label=f"as of {old or 'undated'}",
                           new_label=f"as of {new or 'undated'}")
    moved = table(MOVED_COLUMNS, rv.moved, caption=f"Real values that moved ({rv.unit}), "
                                                   "latest first",
                  empty="No real value moved between these vintages.")
    return (html.Div([html.H3(rv.title, className="rb-result-title"), notice(rv.summary, "info")]),
            fig, moved,
            warnings_view(logic.problem_dicts(rv.warnings)), method_view(rv.method))


def register(app: Dash) -> None:
    from ..context import context

    rb = context(app)

    register_base_follows_series(app, rb, ids.RV_SERIES, ids.RV_BASE)

    @app.callback(
        Output(ids.RV_INDEX, "options"), Output(ids.RV_INDEX, "value"),
        Output(ids.RV_SERIES, "options"), Output(ids.RV_SERIES, "value"),
        Output(ids.RV_BASE, "value"),
        Input(ids.WORKSPACE, "data"),
        State(ids.RV_INDEX, "value"), State(ids.RV_SERIES, "value"), State(ids.RV_BASE, "value"),
    )
    def _options(ref: Any, index: Any, series: Any, base: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        return (*options_for(ws, index, series), base if base else str(ws.settings.get("base") or ""))

    @app.callback(Output(ids.RV_OLD, "options"), Output(ids.RV_OLD, "value"),
                  Output(ids.RV_NEW, "options"), Output(ids.RV_NEW, "value"),
                  Input(ids.RV_INDEX, "value"), State(ids.WORKSPACE, "data"))
    def _vintages(index: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        opts, old, new = vintages_for(rb.data.load(r), index)
        return opts, old, opts, new

    @app.callback(
        Output(ids.RV_SUMMARY, "children"), Output(ids.RV_FIGURE, "figure"),
        Output(ids.RV_TABLE, "children"), Output(ids.RV_WARNINGS, "children"),
        Output(ids.RV_METHOD, "children"),
        Input(ids.RV_INDEX, "value"), Input(ids.RV_OLD, "value"), Input(ids.RV_NEW, "value"),
        Input(ids.RV_SERIES, "value"), Input(ids.RV_BASE, "value"),
        State(ids.WORKSPACE, "data"),
    )
    def _compute(index: Any, old: Any, new: Any, series: Any, base: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        return outputs(rb.data.load(r), index, old, new, series, base)
