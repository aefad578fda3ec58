"""Callbacks that several screens register in the same shape, each with its own ids.

Thin, like every callback: they parse values and call the shared view model
(:mod:`dashboard.screens._shared.view`). ``ref_id`` is the screen's workspace gate
(``ids.screen_ref(KEY)``), set only while the screen is shown."""

from __future__ import annotations

from typing import Any

from dash import Dash, Input, Output, State, no_update

from pipeline.errors import RealbasisError
from pipeline.model import Workspace

from ...data import WorkspaceRef
from . import view


def register_base_follows_series(app: Dash, rb: Any, ref_id: str, series_id: str,
                                 base_id: str) -> None:
    """When another series is chosen, keep the base if it is made of whole periods of that
    series, else put the series' default base in the field (view.base_after_series_change)."""

    @app.callback(Output(base_id, "value", allow_duplicate=True),
                  Input(series_id, "value"), State(base_id, "value"), State(ref_id, "data"),
                  prevent_initial_call=True)
    def _base_fits(series: Any, base: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None:
            return no_update
        new = view.base_after_series_change(rb.data.load(r), series, base)
        return no_update if new is None else new


def register_frequency_options(app: Dash, rb: Any, ref_id: str, series_id: str,
                               freq_id: str) -> None:
    """Offer the result frequencies the chosen series can take (view.frequency_options)."""

    @app.callback(Output(freq_id, "options"), Input(series_id, "value"),
                  State(ref_id, "data"))
    def _freqs(series: Any, ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        if r is None or not series:
            return view.frequency_options(Workspace("", ""), None)
        ws = rb.data.load(r)
        try:
            s = view.pick_series(ws, series)
        except RealbasisError:
            s = None
        return view.frequency_options(ws, s)


def register_period_placeholders(app: Dash, rb: Any, ref_id: str, *field_ids: str) -> None:
    """Period fields show what they take, with fiscal labels once the workspace's fiscal
    year is known (view.period_placeholder -> pipeline.fiscal.examples)."""

    @app.callback([Output(f, "placeholder") for f in field_ids], Input(ref_id, "data"))
    def _placeholders(ref: Any) -> Any:
        r = WorkspaceRef.from_dict(ref)
        text = view.period_placeholder(rb.data.load(r) if r is not None else None)
        return [text] * len(field_ids)
