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

from ...components import (
    Column,
    band_view,
    method_view,
    notice,
    problems_view,
    table,
    warnings_view,
)
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


def with_gaps(tbl: Any, ws: Workspace, series: Any) -> Any:
    """The revision table with a row for every period of the series' span, a missing one
    empty, so the chart breaks its lines there instead of joining the values either side
    (the engine's table holds the periods with values; its warnings name the gap). Left
    as it is when its periods are not the series' own (another result frequency)."""
    import pandas as pd

    try:
        s = pick_series(ws, str(series))
    except RealbasisError:
        return tbl
    v = s.values.dropna()
    if v.empty or tbl.empty:
        return tbl
    labels = list(s.frequency.labels(pd.period_range(v.index[0], v.index[-1],
                                                     freq=v.index.freq)))
    have = [str(p) for p in tbl["period"]]
    if not set(have) <= set(labels) or tbl["period"].duplicated().any():
        return tbl
    span = labels[labels.index(have[0]):labels.index(have[-1]) + 1]
    if len(span) == len(have):
        return tbl
    out = tbl.assign(period=have).set_index("period").reindex(span)
    return out.rename_axis("period").reset_index()


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
    fig = revisions_figure(with_gaps(rv.table, ws, series), title="", unit=rv.unit,
                           old_label=f"as of {old or 'undated'}",
                           new_label=f"as of {new or 'undated'}")
    moved = table(MOVED_COLUMNS, rv.moved, caption=f"Real values that moved ({rv.unit}), "
                                                   "latest first",
                  empty="No real value moved between these vintages.")
    return (html.Div([html.H3(rv.title, className="rb-result-title"), notice(rv.summary, "info")]),
            fig, moved,
            warnings_view(problem_dicts(rv.warnings)), method_view(rv.method))


# --------------------------------------------------------------------------- revision band

BAND_CONTEXT = 24  # periods before the preliminary stretch the band chart shows

INDEX_BAND_COLUMNS = (
    Column("period", "Period"),
    Column("value", "Index (preliminary)", "number", 3),
    Column("low", "Low", "number", 3),
    Column("high", "High", "number", 3),
    Column("age_months", "Age (months since release)"),
    Column("ages_pooled", "Ages pooled"),
    Column("revisions_used", "Past revisions used"),
)


def real_band_columns(unit: str, dollars: str) -> tuple[Column, ...]:
    return (
        Column("period", "Period"),
        Column("real", f"Real ({unit}, {dollars})", "number", 1),
        Column("real_low", "Low", "number", 1),
        Column("real_high", "High", "number", 1),
        Column("growth", "Real growth on a year earlier", "percent", 2),
        Column("growth_low", "Low", "percent", 2),
        Column("growth_high", "High", "percent", 2),
        Column("status", "Status"),
    )


def _tail_from(labels: list[str], first_band: str | None, context: int) -> int:
    """Position to start a chart at: ``context`` periods before the band's first period."""
    if first_band is None or first_band not in labels:
        return max(0, len(labels) - context)
    return max(0, labels.index(first_band) - context)


def band_outputs(ws: Workspace, index: Any, new: Any, series: Any, base: Any
                 ) -> tuple[Any, Any]:
    """The revision band of the chosen index's later vintage (pipeline.revision_risk) for
    the chosen series: a chart of the index band and the real band, the sentences, the
    tables and the method note (or, with one vintage, a plain note why there is none)."""
    from pipeline.compare import trim_to_cover
    from pipeline.deflate import deflate

    from ...figures import revision_band_figure
    from .._shared.view import band_width_note, fy_start, quantile_words, revision_band_for

    if not index or index not in ws.indexes:
        return empty_figure(""), None
    try:
        d = pick_index(ws, index, new if new in ws.indexes[index] else None)
        s = pick_series(ws, series) if series else None
        money = trim_to_cover(s, [d])[0] if s is not None else None
        base_text = read_base(ws, base_for(money, base)) if money is not None else None
        to = result_frequency(ws, "auto", money, [d]) if money is not None else None
        bv = revision_band_for(ws, index, [money] if money is not None else [], base_text,
                               current=d.vintage if d.vintage in ws.indexes[index] else new,
                               to=to)
        if not bv.available:
            return (empty_figure(bv.note or "No revision band."),
                    band_view((), [bv.note]))
        band = bv.band
        ib = band.index_band
        labels = list(d.frequency.labels(d.index))
        start = _tail_from(labels, str(ib["period"].iloc[0]), BAND_CONTEXT)
        st = d.status_or_final()
        index_part = {"x": labels[start:], "y": list(d.values.iloc[start:]),
                      "status": [str(v) for v in st.iloc[start:]],
                      "band_x": list(ib["period"]), "low": list(ib["low"]),
                      "high": list(ib["high"])}
        real_part = None
        real_rows: list[dict[str, Any]] = []
        rows = bv.real_rows(money.name) if money is not None else pd.DataFrame()
        dollars = f"constant {band.base} dollars"
        if money is not None and not rows.empty:
            res = deflate([money], [d], base_text, to=to, fy_start=fy_start(ws))
            real = res.real_series(money.name, 0)
            rstatus = res.status_frame(0)[money.name].reindex(real.index).astype(str)
            rl = list(res.frequency.labels(real.index))
            rs = _tail_from(rl, str(rows["period"].iloc[0]), BAND_CONTEXT)
            real_part = {"x": rl[rs:], "y": list(real.iloc[rs:]), "status": list(rstatus[rs:]),
                         "band_x": list(rows["period"]), "low": list(rows["real_low"]),
                         "high": list(rows["real_high"])}
            real_rows = [{**r, "growth": r["growth_pct"] / 100,
                          "growth_low": r["growth_low_pct"] / 100,
                          "growth_high": r["growth_high_pct"] / 100}
                         for r in rows.iloc[::-1].to_dict("records")]
        band_label = (f"range past revisions imply ({quantile_words(band.quantiles)}, "
                      f"{band.revisions_used:,} revisions)")
        unit = (money.unit or "unit not stated") if money is not None else ""
        title = (f"Revision band of {index}, vintage {band.current or 'not stated'}"
                 + (f", and {money.name} in {dollars} ({unit})" if real_part else ""))
        fig = revision_band_figure(index_part, real_part, title=title,
                                   index_label=f"{index} (vintage {band.current})",
                                   real_label=(f"{money.name}, real ({dollars})"
                                               if money is not None else ""),
                                   band_label=band_label, unit=unit)
    except RealbasisError as err:
        return (empty_figure("See the problems below."),
                problems_view(error_dicts(err), title="No revision band"))
    section = html.Div([
        band_view(bv.statements, [bv.note, band_width_note(rows, unit) if real_part else None]),
        table(INDEX_BAND_COLUMNS, ib.iloc[::-1].to_dict("records"),
              caption=f"Index band: each preliminary value of {index} and the range past "
                      "revisions of values of its age imply, latest first"),
        (table(real_band_columns(unit, dollars), real_rows,
               caption=f"Real band of {money.name} ({unit}): periods whose real value or "
                       "growth moves within the band, latest first")
         if real_rows else None),
        warnings_view(problem_dicts(bv.warnings)),
        method_view(bv.method, title="How the revision band was measured"),
    ], className="rb-tables")
    return fig, section
