"""The Revisions screen's callbacks: thin, they parse values and call :mod:`.view`."""

from __future__ import annotations

from typing import Any

from dash import Dash, Input, Output, State, no_update

from ... import ids
from ...context import context
from ...data import WorkspaceRef
from .._shared.callbacks import register_base_follows_series, register_period_placeholders
from .._shared.view import shown_base
from . import view


def register(app: Dash) -> None:
    rb = context(app)

    register_base_follows_series(app, rb, ids.RV_SERIES, ids.RV_BASE)
    register_period_placeholders(app, rb, ids.RV_BASE)

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
        opts = view.options_for(ws, index, series)
        return (*opts, shown_base(ws, base, opts[3]))

    @app.callback(Output(ids.RV_OLD, "options"), Output(ids.RV_OLD, "value"),
                  Output(ids.RV_NEW, "options"), Output(ids.RV_NEW, "value"),
                  Input(ids.RV_INDEX, "value"), State(ids.WORKSPACE, "data"))
    def _vintages(index: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        opts, old, new = view.vintages_for(rb.data.load(r), index)
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
        return view.outputs(rb.data.load(r), index, old, new, series, base)

    @app.callback(
        Output(ids.RV_BAND_FIGURE, "figure"), Output(ids.RV_BAND, "children"),
        Input(ids.RV_INDEX, "value"), Input(ids.RV_NEW, "value"),
        Input(ids.RV_SERIES, "value"), Input(ids.RV_BASE, "value"),
        State(ids.WORKSPACE, "data"),
    )
    def _band(index: Any, new: Any, series: Any, base: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        return view.band_outputs(rb.data.load(r), index, new, series, base)
