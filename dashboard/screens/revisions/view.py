"""The Revisions screen's view model: plain functions, tested without a browser
(tests/test_view_revisions.py).

:func:`revisions` compares two vintages of an index and deflates one series with each
(pipeline.revisions); :func:`outputs` turns that into what the screen shows.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import pandas as pd
from dash import html

from pipeline.errors import Problem, RealbasisError, fail
from pipeline.model import Workspace

from ...components import Column, method_view, notice, problems_view, table, warnings_view
from ...figures import empty_figure, revisions_figure
from .._shared.view import (
    UI005,
    base_for,
    choose,
    error_dicts,
    fiscal_note,
    fy_start,
    pick_index,
    pick_series,
    problem_dicts,
    read_base,
    result_frequency,
    series_options,
    stretch_text,
)


def revisable_indexes(ws: Workspace) -> list[dict[str, str]]:
    """Indexes held in two or more vintages."""
    return [{"label": f"{name} ({len(v):,} vintages)", "value": name}
            for name, v in ws.indexes.items() if len(v) > 1]


def vintage_options(ws: Workspace, name: str | None) -> list[dict[str, str]]:
    if not name or name not in ws.indexes:
        return []
    return [{"label": (v or "vintage not stated") + f" ({stretch_text(s)})", "value": v}
            for v, s in sorted(ws.indexes[name].items())]


@dataclass(frozen=True)
class Revisions:
    comparison: Any          # pipeline.revisions.VintageComparison
    impact: Any              # pipeline.revisions.RevisionImpact
    table: pd.DataFrame      # impact rows of the chosen series
    moved: list[dict[str, Any]]
    summary: list[str]
    title: str
    unit: str
    method: tuple[str, ...]
    warnings: tuple[Problem, ...]


def revisions(ws: Workspace, index: str, old: str, new: str, series_key: str,
              base: str | None, *, to: str | None = "auto") -> Revisions:
    """Two vintages of an index and what moved in the real figures (pipeline.revisions)."""
    from pipeline.revisions import compare_vintages, revision_impact

    if old == new:
        raise fail(UI005, "the same vintage is chosen twice", expected="two different vintages",
                   found=old or "vintage not stated", fix="Choose an earlier and a later vintage.")
    o, n = pick_index(ws, index, old), pick_index(ws, index, new)
    s = pick_series(ws, series_key)
    fy = fy_start(ws)
    cmp = compare_vintages(o, n, fy_start=fy)
    impact = revision_impact([s], o, n, read_base(ws, base_for(s, base)),
                             to=result_frequency(ws, to, s, [n]), fy_start=fy)
    t = impact.table[impact.table["series"] == s.name].reset_index(drop=True)
    changed = t[t["real_change"].abs() > 1e-9]
    moved = changed.iloc[::-1].head(24).to_dict("records")
    unit = s.unit or "unit not stated"
    summary = [
        f"{cmp.revised:,} index value(s) revised between {old or 'the undated vintage'} and "
        f"{new or 'the undated vintage'}; {cmp.added:,} added; {cmp.finalised:,} turned final.",
    ]
    if cmp.largest is not None:
        summary.append(f"Largest index revision: {cmp.largest[1]:+,.3f} points in "
                       f"{cmp.largest[0]}.")
    if len(changed):
        big = changed.loc[changed["real_change"].abs().idxmax()]
        summary.append(f"{len(changed):,} real value(s) of {s.name} moved; the largest move is "
                       f"{big['real_change']:+,.1f} {unit} ({big['real_change_pct']:+,.2f} %) "
                       f"in {big['period']}.")
    else:
        summary.append(f"No real value of {s.name} moved.")
    title = (f"{s.name} in constant {impact.base} dollars under two vintages of {index} "
             f"({unit})")
    return Revisions(cmp, impact, t, moved, summary, title, unit,
                     (*cmp.method_note(), *impact.method_note(), *fiscal_note(ws)),
                     (*cmp.warnings, *impact.warnings))


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


def options_for(ws: Workspace, index: Any, series: Any) -> tuple[Any, ...]:
    i_opts = revisable_indexes(ws)
    s_opts = series_options(ws)
    return i_opts, choose(index, i_opts), s_opts, choose(series, s_opts, ws.settings.get("series"))


def vintages_for(ws: Workspace, index: Any) -> tuple[Any, Any, Any]:
    opts = vintage_options(ws, index)
    values = [o["value"] for o in opts]
    if len(values) < 2:
        return opts, None, None
    return opts, values[-2], values[-1]


def outputs(ws: Workspace, index: Any, old: Any, new: Any, series: Any, base: Any
            ) -> tuple[Any, Any, Any, Any, Any]:
    if not index or series is None or old is None or new is None:
        msg = ("This workspace has no index in two vintages yet: upload a later release on the "
               "intake screen." if not revisable_indexes(ws) else
               "Choose an index, two vintages and a series.")
        return notice(msg, "info"), empty_figure(msg), None, None, method_view(())
    try:
        rv = revisions(ws, index, old, new, series, base)
    except RealbasisError as err:
        return (notice("These figures cannot be computed.", "warn"),
                empty_figure("See the problems below."), None,
                problems_view(error_dicts(err), title="Cannot compute"), method_view(()))
    fig = revisions_figure(rv.table, title="", unit=rv.unit,
                           old_label=f"as of {old or 'undated'}",
                           new_label=f"as of {new or 'undated'}")
    moved = table(MOVED_COLUMNS, rv.moved, caption=f"Real values that moved ({rv.unit}), "
                                                   "latest first",
                  empty="No real value moved between these vintages.")
    return (html.Div([html.H3(rv.title, className="rb-result-title"), notice(rv.summary, "info")]),
            fig, moved,
            warnings_view(problem_dicts(rv.warnings)), method_view(rv.method))
