"""The Deflator spread screen's view model: plain functions, tested without a browser
(tests/test_view_spread.py).

The computation is the engine's :func:`pipeline.compare.compare_deflators` (through
:func:`dashboard.screens._shared.view.comparison`, shared with the share screen's chart
image): the series under every chosen deflator that can serve it, the verdict over
those, and the others left out, named, with the reason. Here it is turned into what the
screen shows.
"""

from __future__ import annotations

from typing import Any

from dash import html

from pipeline.errors import RealbasisError
from pipeline.model import Workspace

from ...components import Column, method_view, notice, problems_view, table, warnings_view
from ...figures import empty_figure, spread_figure
from .._shared.view import (
    INTERPOLATE_VALUE,
    choices_view,
    choose,
    comparison,
    deflator_choices,
    error_dicts,
    fiscal_note,
    pick_series,
    problem_dict,
    problem_dicts,
    series_options,
)

GROWTH_COLUMNS = (
    Column("deflator", "Deflator"),
    Column("nominal", "Nominal growth", "percent", 2),
    Column("price", "Price growth (deflator)", "percent", 2),
    Column("real", "Real growth", "percent", 2),
    Column("status", "Index status"),
)


def outputs(ws: Workspace, series: str | None, deflators: list[str] | None, base: str | None,
            freq: str | None, measure: str | None, *, interpolate: Any = False
            ) -> tuple[Any, Any, Any, Any, Any, Any]:
    """Verdict, title, figure, growth table, warnings and method note. A chosen deflator
    that cannot serve the series is left out and named with the reason (above the
    verdict); the verdict is over the others."""
    if not series or not deflators:
        msg = "Choose a series and one or more deflators."
        return notice(msg, "info"), msg, empty_figure(msg), None, None, method_view(())
    try:
        cmp = comparison(ws, series, list(deflators), base, to=freq or "auto",
                         measure=measure or "yoy", interpolate=interpolate)
    except RealbasisError as err:
        return (notice("No verdict: none of the chosen deflators can serve this series. "
                       "Each one's reason is below.", "warn"),
                "These figures cannot be computed", empty_figure("See the problems below."),
                None, problems_view(error_dicts(err), title="Cannot compute"),
                method_view(fiscal_note(ws)))
    fig = spread_figure(cmp.table(), title="", unit=_unit(cmp))
    growth = table(GROWTH_COLUMNS, list(cmp.rows),
                   caption=f"Growth per deflator: {cmp.measure_words}; "
                           "(1 + nominal) = (1 + real) × (1 + price), exactly")
    left = cmp.left_out_text()
    remedies = list(dict.fromkeys(problem_dict(f.as_problem(cmp.series))["fix"]
                                  for f in cmp.left_out))
    verdict = html.Div([
        html.Div(html.P(cmp.verdict.text), className=f"rb-notice rb-{cmp.verdict.tone}"),
        notice([f"{left} The verdict is over the other {len(cmp.deflators):,}.",
                *(f"To use {f.deflator}: {fix}" for f, fix in zip(cmp.left_out, remedies,
                                                                  strict=False))]
               if left else None, "warn"),
    ])
    others = [w for w in cmp.warnings if w.code != "DF041"]  # the left-out line says those
    return (verdict, cmp.title, fig, growth, warnings_view(problem_dicts(others)),
            method_view((*cmp.method_note(), *fiscal_note(ws))))


def _unit(cmp: Any) -> str:
    units = cmp.result.units
    return (units[0] if units else None) or "unit not stated"


def options_for(ws: Workspace, series: Any, chosen: Any) -> tuple[Any, ...]:
    """Series options and the series to show (the current one while offered, else the
    saved one), and the saved interpolation switch."""
    s_opts = series_options(ws)
    return (s_opts, choose(series, s_opts, ws.settings.get("series")),
            [INTERPOLATE_VALUE] if ws.settings.get("interpolate") else [])


def deflator_picker(ws: Workspace, series: Any, chosen: Any, base: Any, freq: Any,
                    interpolate: Any) -> tuple[Any, Any, Any]:
    """The deflators to compare: only those that can serve the series are offered (the
    others disabled, with the reason, and listed under the picker with what would make
    them serve); the current choices kept, else the saved ones, else the first five that
    serve."""
    try:
        money = [pick_series(ws, series)] if series else []
    except RealbasisError:
        money = []
    ch = deflator_choices(ws, money, base, to=freq or "auto", interpolate=interpolate,
                          mark_partial=False)
    names = [o["value"] for o in ch.options]
    offered = [o["value"] for o in ch.options if not o.get("disabled")]
    # a deflator chosen before (or saved) that cannot serve stays chosen: the comparison
    # leaves it out and says why, so the user sees what happened to it
    keep = [d for d in (chosen or []) if d in names]
    if not keep:
        keep = [d for d in (ws.settings.get("deflators") or []) if d in names]  # type: ignore[union-attr]
    if not keep:
        keep = offered[:5]
    return ch.options, keep, choices_view(ch)
