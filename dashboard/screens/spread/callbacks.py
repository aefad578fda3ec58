"""The Deflator spread screen's callbacks: thin, they parse values and call :mod:`.view`."""

from __future__ import annotations

from typing import Any

from dash import Dash, Input, Output, State, no_update

from ... import ids
from ...context import context
from ...data import WorkspaceRef
from .._shared.callbacks import (
    register_base_follows_series,
    register_frequency_options,
    register_period_placeholders,
)
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

    register_base_follows_series(app, rb, REF, ids.SP_SERIES, ids.SP_BASE)
    register_frequency_options(app, rb, REF, ids.SP_SERIES, ids.SP_FREQ)
    register_period_placeholders(app, rb, REF, ids.SP_BASE)

    @app.callback(
        Output(ids.SP_SERIES, "options"), Output(ids.SP_SERIES, "value"),
        Output(ids.SP_BASE, "value"), Output(ids.SP_INTERP, "value"),
        Input(REF, "data"),
        State(ids.SP_SERIES, "value"), State(ids.SP_DEFLATORS, "value"),
        State(ids.SP_BASE, "value"), State(ids.SP_INTERP, "value"), State(ids.URL, "hash"),
    )
    def _options(ref: Any, series: Any, chosen: Any, base: Any, interp: Any,
                 hash_: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        asked = address_choices(hash_, KEY)
        s_opts, chosen_series, saved_interp = view.options_for(
            ws, series or asked.get("series"), chosen or asked.get("deflators", multi=True))
        return (s_opts, chosen_series, shown_base(ws, base or asked.get("base"), chosen_series),
                interp or saved_interp)

    @app.callback(
        Output(ids.SP_DEFLATORS, "options"), Output(ids.SP_DEFLATORS, "value"),
        Output(ids.SP_DEFLATOR_WHY, "children"),
        Input(REF, "data"), Input(ids.SP_SERIES, "value"), Input(ids.SP_BASE, "value"),
        Input(ids.SP_FREQ, "value"), Input(ids.SP_INTERP, "value"),
        State(ids.SP_DEFLATORS, "value"), State(ids.URL, "hash"),
    )
    def _deflators(ref: Any, series: Any, base: Any, freq: Any, interp: Any,
                   chosen: Any, hash_: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        chosen = chosen or address_choices(hash_, KEY).get("deflators", multi=True)
        choices = (series, chosen, base, freq, interp)
        return rb.cached(ws, "spread.deflators", choices,
                         lambda: view.deflator_picker(ws, *choices))

    @app.callback(
        Output(ids.SP_VERDICT, "children"), Output(ids.SP_TITLE, "children"),
        Output(ids.SP_FIGURE, "figure"), Output(ids.SP_GROWTH, "children"),
        Output(ids.SP_WARNINGS, "children"), Output(ids.SP_METHOD, "children"),
        Input(ids.SP_SERIES, "value"), Input(ids.SP_DEFLATORS, "value"),
        Input(ids.SP_BASE, "value"), Input(ids.SP_FREQ, "value"), Input(ids.SP_MEASURE, "value"),
        Input(ids.SP_INTERP, "value"),
        State(REF, "data"),
    )
    def _compute(series: Any, deflators: Any, base: Any, freq: Any, measure: Any,
                 interp: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        return rb.cached(ws, "spread.outputs", (series, deflators, base, freq, measure, interp),
                         lambda: view.outputs(ws, series, deflators, base, freq, measure,
                                              interpolate=interp))
