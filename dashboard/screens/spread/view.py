"""The Deflator spread screen's view model: plain functions, tested without a browser
(tests/test_view_spread.py).

The computation (one series under several deflators, growth per deflator and the verdict)
is :func:`dashboard.screens._shared.view.spread`, shared with the share screen's chart
image; here it is turned into what the screen shows.
"""

from __future__ import annotations

from typing import Any

from dash import html

from pipeline.errors import RealbasisError
from pipeline.model import Workspace

from ...components import Column, method_view, notice, problems_view, table, warnings_view
from ...figures import empty_figure, spread_figure
from .._shared.view import (
    choose,
    deflator_options,
    error_dicts,
    problem_dicts,
    series_options,
    spread,
)

GROWTH_COLUMNS = (
    Column("deflator", "Deflator"),
    Column("nominal", "Nominal growth", "percent", 2),
    Column("price", "Price growth (deflator)", "percent", 2),
    Column("real", "Real growth", "percent", 2),
    Column("status", "Index status"),
)


def outputs(ws: Workspace, series: str | None, deflators: list[str] | None, base: str | None,
            freq: str | None, measure: str | None) -> tuple[Any, Any, Any, Any, Any, Any]:
    """Verdict, title, figure, growth table, warnings and method note."""
    if not series or not deflators:
        msg = "Choose a series and one or more deflators."
        return notice(msg, "info"), msg, empty_figure(msg), None, None, method_view(())
    try:
        sp = spread(ws, series, list(deflators), base, to=freq or "auto",
                          measure=measure or "yoy")
    except RealbasisError as err:
        return (notice("No verdict: the figures cannot be computed.", "warn"),
                "These figures cannot be computed", empty_figure("See the problems below."),
                None, problems_view(error_dicts(err), title="Cannot compute"),
                method_view(()))
    fig = spread_figure(sp.table, title="", unit=sp.unit)
    growth = table(GROWTH_COLUMNS, sp.rows,
                   caption=f"Growth per deflator: {sp.measure_words}; "
                           "(1 + nominal) = (1 + real) × (1 + price), exactly")
    verdict = html.Div(html.P(sp.verdict), className=f"rb-notice rb-{sp.verdict_tone}")
    return (verdict, sp.title, fig, growth, warnings_view(problem_dicts(sp.warnings)),
            method_view(sp.method))


def options_for(ws: Workspace, series: Any, chosen: Any) -> tuple[Any, ...]:
    """Series and deflator options, and the choices to show: the current ones while they
    are offered, else the saved ones, else the first series and the first five deflators."""
    s_opts = series_options(ws)
    d_opts = deflator_options(ws)
    offered = {o["value"] for o in d_opts}
    keep = [d for d in (chosen or []) if d in offered]
    if not keep:
        keep = [d for d in (ws.settings.get("deflators") or []) if d in offered]  # type: ignore[union-attr]
    if not keep:
        keep = [o["value"] for o in d_opts[:5]]
    return s_opts, choose(series, s_opts, ws.settings.get("series")), d_opts, keep
