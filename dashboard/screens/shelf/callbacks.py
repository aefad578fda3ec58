"""The Deflator shelf's callbacks: thin, they parse values and call :mod:`.view`."""

from __future__ import annotations

from typing import Any

from dash import Dash, Input, Output, State, ctx, no_update

from ... import ids
from ...context import context
from ...data import WorkspaceRef
from ...writes import writes
from .._shared.callbacks import register_period_placeholders
from .._shared.view import address_choices
from . import view

KEY = __package__.rsplit(".", 1)[-1]
"""The screen's key: its package's name (dashboard.screens.discover checks they agree)."""
REF = ids.screen_ref(KEY)
SAVED = ids.screen_saved(KEY)  # what a change saved (the shell passes it on)
GOTO = ids.screen_goto(KEY)  # a workspace to open (the shell puts it in the address)
"""The workspace this screen computes for (set by the shell only while it is shown)."""


def register(app: Dash) -> None:
    rb = context(app)

    register_period_placeholders(app, rb, REF, ids.SH_REBASE_BASE)

    @app.callback(
        Output(ids.SH_TABLE, "children"), Output(ids.SH_FIGURE, "figure"),
        Output(ids.SH_INDEX, "options"), Output(ids.SH_INDEX, "value"),
        Output(ids.SH_TARGET, "options"), Output(ids.SH_LINK_OLD, "options"),
        Output(ids.SH_LINK_NEW, "options"), Output(ids.SH_COST_COMPONENTS, "options"),
        Output(ids.SH_COST_WEIGHTS, "value"),
        Input(REF, "data"), Input(ids.SH_INDEX, "value"),
        State(ids.SH_COST_WEIGHTS, "value"), State(ids.URL, "hash"),
    )
    def _shelf(ref: Any, drawn: Any, weights: Any, hash_: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        ws = rb.data.load(r)
        drawn = drawn or address_choices(hash_, KEY).get("index", multi=True)
        table_, fig, opts, chosen = rb.cached(ws, "shelf.outputs", (drawn,),
                                              lambda: view.outputs(ws, drawn))
        links = view.link_options(ws)
        return (table_, fig, opts, chosen, opts, links, links, opts,
                weights or str(ws.settings.get("cost_weights") or ""))

    @app.callback(
        Output(SAVED, "data", allow_duplicate=True),
        Output(ids.SH_MESSAGE, "children"), Output(ids.SH_METHOD, "children"),
        Input(ids.SH_REBASE, "n_clicks"), Input(ids.SH_PROJECT, "n_clicks"),
        Input(ids.SH_LINK, "n_clicks"), Input(ids.SH_COST_BUILD, "n_clicks"),
        State(ids.SH_TARGET, "value"), State(ids.SH_REBASE_BASE, "value"),
        State(ids.SH_PROJECT_RATE, "value"), State(ids.SH_PROJECT_UNTIL, "value"),
        State(ids.SH_LINK_OLD, "value"), State(ids.SH_LINK_NEW, "value"),
        State(ids.SH_LINK_OVERLAP, "value"),
        State(ids.SH_COST_NAME, "value"), State(ids.SH_COST_COMPONENTS, "value"),
        State(ids.SH_COST_WEIGHTS, "value"), State(ids.SH_COST_METHOD, "value"),
        State(REF, "data"), prevent_initial_call=True,
    )
    @writes("add an index to the workspace")
    def _act(_r: Any, _p: Any, _l: Any, _c: Any, target: Any, base: Any, rate: Any,
             until: Any, old: Any, new: Any, overlap: Any, cname: Any, comps: Any,
             weights: Any, method: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        which = {ids.SH_REBASE: "rebase", ids.SH_PROJECT: "project", ids.SH_LINK: "link",
                 ids.SH_COST_BUILD: "cost"}.get(ctx.triggered_id)
        if r is None or which is None:
            return no_update, no_update, no_update
        new_ref, message, method_note = view.run_action(
            rb.data, r, which, target=target, base=base, rate=rate, until=until, old=old,
            new=new, overlap=overlap, cost_name=cname, components=comps, weights=weights,
            method=method)
        return (new_ref.as_dict() if new_ref else no_update), message, method_note
