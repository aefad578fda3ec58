"""The Revisions screen's callbacks: thin, they parse values and call :mod:`.view`."""

from __future__ import annotations

from typing import Any

from dash import Dash, Input, Output, State, no_update

from ... import ids
from ...context import context
from ...data import WorkspaceRef
from .._shared.callbacks import register_base_follows_series, register_period_placeholders
from .._shared.view import address_choices, shown_base
from . import view

KEY = __package__.rsplit(".", 1)[-1]
"""The screen's key: its package's name (dashboard.screens.discover checks they agree)."""
REF = ids.screen_ref(KEY)
SAVED = ids.screen_saved(KEY)  # what a change saved (the shell passes it on)
GOTO = ids.screen_goto(KEY)  # a workspace to open (the shell puts it in the address)
"""The workspace this screen computes for (set by the shell only while it is shown)."""


def register(app: Dash) -> None:
    rb = context(app)

    register_base_follows_series(app, rb, REF, ids.RV_SERIES, ids.RV_BASE)
    register_period_placeholders(app, rb, REF, ids.RV_BASE)

    @app.callback(
        Output(ids.RV_INDEX, "options"), Output(ids.RV_INDEX, "value"),
        Output(ids.RV_SERIES, "options"), Output(ids.RV_SERIES, "value"),
        Output(ids.RV_BASE, "value"),
        Input(REF, "data"),
        State(ids.RV_INDEX, "value"), State(ids.RV_SERIES, "value"), State(ids.RV_BASE, "value"),
        State(ids.URL, "hash"),
    )
    def _options(ref: Any, index: Any, series: Any, base: Any, hash_: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        asked = address_choices(hash_, KEY)
        opts = view.options_for(ws, index or asked.get("index"), series or asked.get("series"))
        return (*opts, shown_base(ws, base or asked.get("base"), opts[3]))

    @app.callback(Output(ids.RV_OLD, "options"), Output(ids.RV_OLD, "value"),
                  Output(ids.RV_NEW, "options"), Output(ids.RV_NEW, "value"),
                  Input(ids.RV_INDEX, "value"), State(REF, "data"))
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
        State(REF, "data"),
    )
    def _compute(index: Any, old: Any, new: Any, series: Any, base: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        choices = (index, old, new, series, base)
        return rb.cached(ws, "revisions.outputs", choices, lambda: view.outputs(ws, *choices))

    @app.callback(
        Output(ids.RV_BAND_FIGURE, "figure"), Output(ids.RV_BAND, "children"),
        Input(ids.RV_INDEX, "value"), Input(ids.RV_NEW, "value"),
        Input(ids.RV_SERIES, "value"), Input(ids.RV_BASE, "value"),
        State(REF, "data"),
    )
    def _band(index: Any, new: Any, series: Any, base: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        choices = (index, new, series, base)
        return rb.cached(ws, "revisions.band", choices, lambda: view.band_outputs(ws, *choices))
