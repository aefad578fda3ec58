"""The Real terms screen's view model: plain functions, tested without a browser
(tests/test_view_real.py).

:func:`compute_real` deflates one series (or a total) by one deflator through the engine
and, when asked, seasonally adjusts nominal and real after deflation; :func:`outputs` turns
the result into the title, figure, warnings, growth tables and method note the callbacks
return. :func:`save_choices` keeps the screen's choices in the workspace settings (the
exports use them); :func:`adjust_all` adjusts every monthly and quarterly series in a
background job.

A **total of parts, each by its own deflator** (series choice ``__parts__|<first part>``):
:func:`pair_choices` offers each part the deflators that can serve it (the serve check,
through ``_shared.view.deflator_choices``), :func:`compute_total` totals them through
pipeline.workbook.workspace_total (additive, chained Fisher or annual overlap), and
:func:`total_outputs` shows parts, total and residual, the contributions to real growth
and the board-pack table. :func:`screen_outputs` is what the callback calls for either
choice. The **revision band** of the deflator (pipeline.revision_risk, through
``_shared.view.revision_band_for``) is drawn on the real line when the deflator is held in
several vintages and the figures rest on its preliminary values.
"""

from __future__ import annotations

import dataclasses
import json
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import pandas as pd
from dash import html

from pipeline.errors import Problem, RealbasisError, fail
from pipeline.model import Frequency, Series, Workspace
from pipeline.periods import Span

from ...components import (
    Column,
    band_view,
    method_view,
    notice,
    problems_view,
    table,
    warnings_view,
)
from ...data import DataAccess, WorkspaceRef, saved_words
from ...figures import (
    add_band,
    contributions_figure,
    empty_figure,
    real_terms_figure,
    total_figure,
)
from .._shared.view import (
    INTERPOLATE_VALUE,
    TOTAL,
    UI005,
    BandView,
    ProgressFn,
    band_width_note,
    base_for,
    choices_view,
    choose,
    deflator_choices,
    error_dicts,
    fiscal_note,
    fy_start,
    interpolation,
    latest_vintage,
    outlay_field,
    outlay_years,
    parts_text,
    pick_index,
    pick_series,
    problem_dicts,
    quantile_words,
    read_base,
    read_outlay_field,
    result_frequency,
    revision_band_for,
    save_outlay,
    series_options,
    total_groups,
    total_members,
    yearly_frequency,
)

# --------------------------------------------------------------------------- computing


@dataclass(frozen=True)
class Computed:
    """Nominal and real values of one series under one deflator, ready for the views."""

    frame: pd.DataFrame            # period (label), nominal, real, deflator_index, status
    nominal: pd.Series             # on a PeriodIndex (for growth)
    real: pd.Series
    frequency: Frequency
    base_label: str
    dollars_label: str
    unit: str
    method: tuple[str, ...]
    warnings: tuple[Problem, ...]
    series_name: str
    deflator_name: str
    vintage: str
    left_out: str | None = None    # periods of the series the deflator does not reach
    outlay: str | None = None      # the outlay rates used, in words
    parts: tuple[str, ...] = ()    # the series summed, for a total under one deflator
    deflated: Series | None = None  # the series as deflated (cut to the deflator's span)
    to: Frequency | None = None    # the result frequency asked of the engine
    interpolate: bool = False      # a less frequent deflator filled in (Denton)


def _whole_span(index: pd.Index, periods: pd.Index) -> pd.Index:
    """The periods of ``periods`` from the first of ``index`` to its last (gaps kept)."""
    if len(index) == 0:
        return index
    return periods[(periods >= index[0]) & (periods <= index[-1])]


def _money_series(values: pd.Series, like: Series, frequency: Frequency, name: str) -> Series:
    return Series(name=name, values=values.astype(float), frequency=frequency,
                  kind="flow" if like.kind == "index" else like.kind, unit=like.unit)


def compute_real(ws: Workspace, series_key: str, deflator: str, base: str | None, *,
                 to: str | None = "auto", sa: bool = False, vintage: str | None = None,
                 interpolate: Any = False, outlay: str | None = None) -> Computed:
    """Deflate one series (or the total) by one deflator through the engine; optionally
    seasonally adjust nominal and real (after deflation) through pipeline.seasonal.

    Period fields are read with the workspace's fiscal year (``FY2025``, ``2024-25``);
    ``interpolate`` lets a less frequent deflator serve (Denton, flagged); ``outlay``
    (the outlay-rate box, in percent) deflates the series as budget authority spent over
    several years (:func:`pipeline.outlay.deflate_authority`), by year. The series is cut
    to the periods the deflator covers (:func:`pipeline.compare.trim_to_cover`) and, with
    outlay rates, to the years whose outlays it reaches; what was left out is said, with
    the deflators that would show it and the projection that would (the serve check)."""
    from pipeline.compare import trim_to_cover
    from pipeline.deflate import deflate
    from pipeline.outlay import cut_to_reach

    original = pick_series(ws, series_key)
    d = pick_index(ws, deflator, vintage)
    fy = fy_start(ws)
    interp = interpolation(interpolate)
    rates = (read_outlay_field(outlay, original.name)
             if outlay and not series_key.startswith(TOTAL) else None)
    s, cut = trim_to_cover(original, [d])
    span = read_base(ws, base_for(s, base))
    freq = result_frequency(ws, to, s, [d])
    method_extra: list[str] = []
    if rates is not None:
        if (freq is None or freq.code not in ("A", "FY")) and (to or "auto") == "auto":
            freq = yearly_frequency(ws, None, [s])
            if freq != s.frequency:
                method_extra.append(f"With outlay rates the results are by "
                                    f"{freq.describe()}: rates are shares per year.")
        if freq is None or freq.code in ("A", "FY"):
            s, outlay_cut = cut_to_reach(s, [d], rates, freq or s.frequency)
            if outlay_cut:
                cut = f"{cut} {outlay_cut}" if cut else outlay_cut
    if rates is not None:
        from pipeline.outlay import deflate_authority

        res = deflate_authority([s], [d], span, rates, to=freq, fy_start=fy,
                                interpolate=interp)
    else:
        res = deflate([s], [d], span, to=freq, fy_start=fy, interpolate=interp)
    nominal = res.nominal_series(s.name)
    real = res.real_series(s.name, 0)
    method = [*res.method_note(), *method_extra]
    warnings = list(res.warnings)
    if sa:
        from pipeline.seasonal import adjust

        adj_n = adjust(_money_series(nominal, s, res.frequency, f"{s.name} (nominal)"))
        adj_r = adjust(_money_series(real, s, res.frequency, f"{s.name} (real)"))
        nominal = adj_n.adjusted.values.reindex(nominal.index)
        real = adj_r.adjusted.values.reindex(real.index)
        method.append("Seasonal adjustment after deflation: the nominal and the real series "
                      "were each adjusted the same way.")
        method.extend(adj_r.method_note())
        warnings.extend(adj_n.warnings)
        warnings.extend(adj_r.warnings)
    # the figure's rows: every period from the first value to the last, a missing one
    # kept empty (the engine's DF011 names it), so the chart breaks the line there
    # instead of joining the values either side
    shown = _whole_span(nominal.index, res.periods)
    frame = pd.DataFrame({
        "period": res.frequency.labels(shown),
        "nominal": nominal.reindex(shown).to_numpy(), "real": real.reindex(shown).to_numpy(),
        "deflator_index": res.index_frame(0)[s.name].reindex(shown).to_numpy(),
        "status": res.status_frame(0)[s.name].reindex(shown).where(
            nominal.reindex(shown).notna(), "").astype(str).to_numpy(),
    })
    left_out = None
    if cut:
        left_out = left_out_text(ws, original, s, d, span, res.frequency, interp, rates)
        method.append(cut)
    method.extend(fiscal_note(ws))
    parts = (tuple(total_members(ws, series_key.split("|", 1)[1] if "|" in series_key
                                 else None)) if series_key.startswith(TOTAL) else ())
    return Computed(frame, nominal, real, res.frequency, res.base_label, res.dollars_label,
                    s.unit or "unit not stated", tuple(m for m in method if m),
                    tuple(warnings), s.name, d.name, d.vintage or "", left_out,
                    rates.describe() if rates is not None else None, parts,
                    s if rates is None else None, freq, interp)


def left_out_text(ws: Workspace, original: Series, kept: Series, deflator: Series,
                  base: Span, frequency: Frequency, interpolate: bool = False,
                  rates: Any = None) -> str | None:
    """Which periods of the series are not shown because the deflator does not reach
    them (e.g. a budget's projected out-years), which deflators of the workspace would
    show them and the projection that would: the engine's serve check
    (:func:`pipeline.compare.serve_check`: ``Fit.missing``, ``Fit.project_until``,
    ``ServeCheck.alternatives``). None when nothing was left out."""
    from pipeline.compare import serve_check

    values = original.values.dropna()
    kept_index = kept.values.dropna().index
    dropped = values.index.difference(kept_index)
    if dropped.empty:
        return None
    label = original.frequency.label
    spans = []
    for part in (dropped[dropped < kept_index[0]], dropped[dropped > kept_index[-1]]):
        if len(part):
            spans.append(label(part[0]) if len(part) == 1 else f"{label(part[0])}–{label(part[-1])}")
    status = (original.status.reindex(dropped).astype(str)
              if original.status is not None else pd.Series([], dtype=str))
    what = " (projected values)" if (status == "projected").all() and len(status) else ""
    ends = deflator.values.dropna()
    text = (f"{' and '.join(spans)}{what} of {original.name} are not shown: {deflator.name} "
            f"runs only from {deflator.frequency.label(ends.index[0])} to "
            f"{deflator.frequency.label(ends.index[-1])}")
    if rates is not None:
        text += f", and their outlays at {rates.describe()} need its later years"
    names = list(ws.indexes)
    candidates = [pick_index(ws, n) for n in names]
    try:
        check = serve_check(original, candidates, base, to=frequency, fy_start=fy_start(ws),
                            interpolate=interpolate)
    except RealbasisError:
        return text + "."
    fit = check.fit(deflator.name)
    covering = list(check.alternatives(deflator.name))
    until = fit.project_until
    if rates is not None:
        until = outlay_years({original.name: rates}, [original], frequency) or until
        covering = []  # the serve check does not know outlay years: propose the projection
    how = []
    if covering:
        how.append("choose a deflator that reaches them (" + ", ".join(covering[:3]) + ")")
    if until:
        how.append(f"project {deflator.name} until {until}")
    if not how:
        return text + "."
    return text + ". To see them in real terms " + " or ".join(how) + "."


def real_title(c: Computed, *, sa: bool = False) -> str:
    adj = ", seasonally adjusted" if sa else ""
    through = f" through outlay rates ({c.outlay})" if c.outlay else ""
    held = f" ({parts_text(c.parts)}, summed, then deflated)" if c.parts else ""
    return (f"{c.series_name}{held} in {c.dollars_label} ({c.unit}{adj}), "
            f"deflated by {c.deflator_name}{through}")


def growth_summary(nominal: pd.Series, real: pd.Series, frequency: Frequency, *,
                   annualise: bool = True) -> list[dict[str, Any]]:
    """Nominal, price and real growth by several measures (rates as fractions).

    Every rate comes from pipeline.growth; price growth is that of the implicit
    deflator 100 x nominal / real, so (1 + nominal) = (1 + real)(1 + price) exactly.
    ``annualise=False`` leaves out the annualised period-on-period rate (common practice:
    annualising one month's change of data that is not seasonally adjusted misleads)."""
    from pipeline import growth

    price = 100.0 * nominal / real
    both = nominal.dropna().index.intersection(real.dropna().index)
    rows: list[dict[str, Any]] = []
    if len(both) < 2:
        return rows
    last, first = both[-1], both[0]
    lab = frequency.label

    def add(measure: str, fn: Callable[[pd.Series], float]) -> None:
        vals = {k: fn(v) for k, v in (("nominal", nominal), ("price", price), ("real", real))}
        rows.append({"measure": measure, **vals})

    def at_last(g: Any) -> float:
        v = g.values.get(last, float("nan"))
        return float(v)

    add(f"{lab(last)} on {lab(last - 1)}",
        lambda v: at_last(growth.period_on_period(v, frequency)))
    if frequency.periods_per_year > 1 and annualise:
        add(f"{lab(last)} on {lab(last - 1)}, annualised",
            lambda v: at_last(growth.annualised(v, frequency)))
    if frequency.periods_per_year > 1 and (last - frequency.periods_per_year) in both:
        add(f"{lab(last)} on a year earlier",
            lambda v: at_last(growth.year_on_year(v, frequency)))
    add(f"compound annual rate {lab(first)} to {lab(last)}",
        lambda v: float(growth.cagr(v, first, last, frequency).value))
    add(f"cumulative {lab(first)} to {lab(last)}",
        lambda v: at_last(growth.cumulative(v, frequency, start=first)))
    return rows


def recent_rows(c: Computed, n: int = 8) -> list[dict[str, Any]]:
    """The latest periods: levels, growth on a year earlier, status."""
    from pipeline import growth

    f = c.frequency
    if f.periods_per_year > 1:
        gn = growth.year_on_year(c.nominal, f).values
        gr = growth.year_on_year(c.real, f).values
    else:
        gn = growth.period_on_period(c.nominal, f).values
        gr = growth.period_on_period(c.real, f).values
    rows = []
    for p in c.nominal.index[-n:][::-1]:
        rows.append({"period": f.label(p), "nominal": c.nominal.get(p), "real": c.real.get(p),
                     "g_nominal": gn.get(p), "g_real": gr.get(p),
                     "status": c.frame.set_index("period")["status"].get(f.label(p), "")})
    return rows


SA_METHODS = {"stl": "STL", "stl-robust": "STL, robust to outliers",
              "classical": "classical decomposition (moving averages)",
              "x13": "X-13ARIMA-SEATS (needs the external program)"}


SA_SUFFIX = " (seasonally adjusted)"


def adjust_workspace(ws: Workspace, method: str, progress: ProgressFn | None = None, *,
               x13_path: str | None = None) -> tuple[Workspace, list[str]]:
    """Seasonally adjust every monthly and quarterly money series of the workspace
    (pipeline.seasonal.adjust_many) and add each result as a new series named
    '<name> (seasonally adjusted)'. Annual series are never adjusted."""
    from pipeline.seasonal import adjust_many

    eligible = [s for name, s in ws.series.items()
                if s.frequency.code in ("M", "Q") and not name.endswith(SA_SUFFIX)]
    if not eligible:
        raise fail(UI005, "no monthly or quarterly series to adjust",
                   expected="monthly or quarterly money series",
                   found=f"{len(ws.series):,} series, none monthly or quarterly",
                   fix="Annual and fiscal-year data are never seasonally adjusted.")
    adjs = adjust_many(eligible, method, progress=progress, x13_path=x13_path)  # type: ignore[arg-type]
    money = dict(ws.series)
    for a in adjs:
        name = a.original.name + SA_SUFFIX
        money[name] = dataclasses.replace(a.adjusted, name=name)
    lines = [f"Added {len(adjs):,} seasonally adjusted series ({SA_METHODS.get(method, method)}); "
             "the originals are kept.", *adjs[0].method_note()]
    warned = sum(len(a.warnings) for a in adjs)
    if warned:
        lines.append(f"{warned:,} note(s) from the adjustment; see each series' result.")
    return dataclasses.replace(ws, series=money), lines


# --------------------------------------------------------------------------- what the screen shows


GROWTH_COLUMNS = (
    Column("measure", "Growth"),
    Column("nominal", "Nominal", "percent", 2),
    Column("price", "Prices (implicit deflator)", "percent", 2),
    Column("real", "Real", "percent", 2),
)


def recent_columns(unit: str, dollars: str, yearly: bool) -> tuple[Column, ...]:
    g = "on a year earlier" if yearly else "on the period before"
    return (
        Column("period", "Period"),
        Column("nominal", f"Nominal ({unit})", "number", 1),
        Column("real", f"Real ({unit}, {dollars})", "number", 1),
        Column("g_nominal", f"Nominal growth {g}", "percent", 1),
        Column("g_real", f"Real growth {g}", "percent", 1),
        Column("status", "Index status"),
    )


def options_for(ws: Workspace, series: Any) -> tuple[Any, ...]:
    """Series options and the series to show (the current one while offered, else the
    saved one), and the saved interpolation switch."""
    s_opts = series_options(ws) + parts_options(ws)
    saved = ws.settings
    return (s_opts, choose(series, s_opts, saved.get("series")),
            [INTERPOLATE_VALUE] if saved.get("interpolate") else [])


def deflator_picker(ws: Workspace, series: Any, deflator: Any, base: Any, freq: Any,
                    interpolate: Any, outlay: Any) -> tuple[Any, Any, Any]:
    """The deflator options for the chosen series, base, 'Show as' and outlay rates:
    only those that can deflate it are enabled, the others disabled with the reason and
    listed under the picker with what would make them serve
    (:func:`dashboard.screens._shared.view.deflator_choices`); the choice kept while it
    can serve, else the saved one, else the first that serves."""
    series_list: list[Series] = []
    rates = None
    if series:
        try:
            series_list = [pick_series(ws, series)]
            if outlay and not str(series).startswith(TOTAL):
                rates = read_outlay_field(outlay, series_list[0].name)
        except RealbasisError:
            rates = None
    ch = deflator_choices(ws, series_list, base, to=freq or "auto", interpolate=interpolate,
                          outlay={series_list[0].name: rates} if rates and series_list
                          else None)
    enabled = [o for o in ch.options if not o.get("disabled")]
    serving = [o for o in enabled if o["value"] in ch.fits
               and ch.fits[o["value"]].verdict == "serves"]
    value = choose(deflator if deflator in [o["value"] for o in enabled] else None,
                   enabled, ws.settings.get("deflator"), *(o["value"] for o in serving))
    return ch.options, value, choices_view(ch)


def outputs(ws: Workspace, series: str | None, deflator: str | None, base: str | None,
            freq: str | None, sa: bool, *, interpolate: Any = False, outlay: str | None = None
            ) -> tuple[Any, Any, Any, Any, Any]:
    """Title, figure, warnings, growth tables and method note for the chosen inputs."""
    if not series or not deflator:
        msg = "Choose a series and a deflator."
        return msg, empty_figure(msg), None, None, method_view(())
    try:
        c = compute_real(ws, series, deflator, base, to=freq or "auto", sa=sa,
                         interpolate=interpolate, outlay=outlay)
    except RealbasisError as err:
        return ("These figures cannot be computed", empty_figure("See the problems below."),
                problems_view(error_dicts(err), title="Cannot compute"), None,
                method_view(fiscal_note(ws)))
    title = real_title(c, sa=sa)
    fig = real_terms_figure(c.frame, title="", unit=c.unit,
                            real_label=f"Real ({c.dollars_label})",
                            nominal_label="Nominal" + (" (seasonally adjusted)" if sa else ""))
    try:
        summary = growth_summary(c.nominal, c.real, c.frequency, annualise=sa)
    except RealbasisError as err:
        summary = []
        c = dataclasses.replace(c, warnings=(*c.warnings, *(p.as_warning() for p in err.problems)))
    yearly = c.frequency.periods_per_year > 1
    growth = html.Div([
        table(GROWTH_COLUMNS, summary, caption="Growth: (1 + nominal) = (1 + real) × (1 + prices), "
                                               "exactly"),
        table(recent_columns(c.unit, c.dollars_label, yearly), recent_rows(c),
              caption="Latest periods"),
    ], className="rb-tables")
    status_note = _status_note(c.frame)
    bv, band_notes = real_band(ws, c, base, sa=sa)
    if bv is not None and bv.available and not sa:
        rows = bv.real_rows(c.series_name)
        if not rows.empty:
            add_band(fig, list(rows["period"]), list(rows["real_low"]), list(rows["real_high"]),
                     name=band_label(bv), unit=c.unit)
            band_notes.append(band_width_note(rows, c.unit))
    warn = html.Div([notice(c.left_out, "warn"), notice(status_note, "warn"),
                     band_view(bv.statements if bv else (), band_notes),
                     warnings_view(problem_dicts((*c.warnings, *(bv.warnings if bv else ()))))])
    vintage = f" Index vintage: {c.vintage}." if c.vintage else ""
    band_method = bv.method if bv is not None and bv.available else ()
    return (title, fig, warn, growth,
            method_view((*c.method, f"Deflator: {c.deflator_name}.{vintage}", *band_method)))


def real_band(ws: Workspace, c: Computed, base: str | None, *, sa: bool = False
              ) -> tuple[BandView | None, list[str]]:
    """The revision band of the deflator for the real figures shown, when they rest on
    preliminary values (None otherwise), and the notes to show with it (why there is no
    band; that the band is drawn without seasonal adjustment)."""
    if "preliminary" not in set(c.frame["status"]) or c.deflated is None:
        return None, []
    bv = revision_band_for(ws, c.deflator_name, [c.deflated], base_for(c.deflated, base),
                           current=c.vintage if c.vintage in ws.indexes.get(c.deflator_name, {})
                           else None, to=c.to, interpolate=c.interpolate)
    notes = [bv.note] if bv.note else []
    if sa and bv.available:
        notes.append("The band is measured on the figures before seasonal adjustment and is "
                     "not drawn on the adjusted line; switch seasonal adjustment off to see "
                     "it on the chart.")
        return dataclasses.replace(bv, statements=()), notes
    return bv, notes


def band_label(bv: BandView) -> str:
    return (f"range past revisions of {bv.index} imply ({quantile_words(bv.band.quantiles)}, "
            f"{bv.band.revisions_used:,} revisions)")



def _status_note(frame: Any) -> str | None:
    statuses = set(frame["status"])
    parts = []
    if "preliminary" in statuses:
        parts.append("Some real values rest on preliminary index values (shaded): they will "
                     "move when the index is revised.")
    if "projected" in statuses:
        parts.append("Some rest on projected index values (dashed): these are assumptions.")
    return " ".join(parts) or None


def save_choices(ws: Workspace, series: Any, deflator: Any, base: Any, freq: Any, sa: bool,
                 *, interpolate: Any = False, outlay: str | None = None,
                 pairs: dict[str, Any] | None = None, chain: Any = None) -> Workspace:
    """The screen's choices in the workspace settings (the exports use them); the
    series' outlay rates with them (:func:`pipeline.outlay.with_outlay_rates`; empty
    clears them). For a total of parts, ``settings["total"] = {"pairs": {part:
    deflator}, "chain": ...}`` too (the audit workbook then gets its Contributions
    sheets) and the base the figures used; other choices leave a saved total as it is."""
    settings = dict(ws.settings)
    settings.update({"series": series, "deflator": deflator, "base": base or "",
                     "frequency": freq or "auto", "seasonal_adjustment": bool(sa),
                     "interpolate": interpolation(interpolate)})
    if is_parts(series):
        resolved = resolve_pairs(ws, series, pairs, base, freq)
        chosen = {p: d for p, d in resolved.items() if d != LEAVE_OUT}
        if not chosen:
            raise fail(UI005, "every part is left out of the total",
                       expected="a deflator for at least one part", found="no part chosen",
                       fix="Pick a deflator for the parts to total.", remedy="part_pairs")
        settings["total"] = {"pairs": chosen, "chain": str(chain or "none")}
        settings["base"] = base_for(ws.series[next(iter(chosen))], base)
        if not settings.get("deflator") or settings["deflator"] not in ws.indexes:
            settings["deflator"] = next(iter(chosen.values()))
    out = dataclasses.replace(ws, settings=settings)
    if series and series in ws.series and (outlay or outlay_field(ws, series)):
        out = save_outlay(out, series, outlay)
    return out


def adjust_all(data: DataAccess, ref: WorkspaceRef, method: str,
               progress: ProgressFn | None = None) -> tuple[WorkspaceRef | None, Any]:
    """Seasonally adjust every series of the workspace and save them as new series."""
    try:
        ws = data.load(ref)
        new_ws, lines = adjust_workspace(ws, method or "stl", progress,
                                         x13_path=data.settings.x13_path)
        saved = data.save(new_ws, action=f"seasonally adjusted all series ({method})")
    except RealbasisError as err:
        return None, problems_view(error_dicts(err), title="Not adjusted")
    return (WorkspaceRef(saved.id, saved.version),
            html.Div([notice(f"{lines[0]} {saved_words(ws, saved)}", "ok"),
                      method_view(lines[1:], title="How they were adjusted")]))


def outlay_state(ws: Workspace, series: Any, text: Any) -> str | None:
    """A line under the outlay-rate box: read as what, saved or not (never an error here;
    a bad entry is shown as a coded problem with the figures)."""
    if not series:
        return None
    if str(series).startswith(TOTAL):
        return ("Outlay rates apply to one series at a time; the total is deflated year by "
                "year." if (text or "").strip() else None)
    try:
        rates = read_outlay_field(text, str(series))
    except RealbasisError:
        return None
    saved = outlay_field(ws, str(series))
    if rates is None:
        return ("Outlay rates cleared; press 'Save these choices to the workspace' to keep "
                "that." if saved else None)
    state = ("saved with the workspace" if saved and read_outlay_field(saved) == rates
             else "not saved yet: press 'Save these choices to the workspace' to keep them")
    return f"Outlay rates of {series}: {rates.describe()} ({state})."


# --------------------------------------------------------------------------- total of parts

PARTS = "__parts__"
LEAVE_OUT = "__leave_out__"
HIDDEN: dict[str, str] = {"display": "none"}
SHOWN: dict[str, str] = {}
CHAINS: dict[str, tuple[str, str]] = {
    "none": ("Additive",
             "the parts in constant dollars of the base period, summed. The parts add up "
             "exactly (no residual), but every period is valued at base-period prices, which "
             "weigh parts whose prices have moved far from the base too much or too little."),
    "fisher": ("Chained Fisher, period to period",
               "each change is valued at the prices of that period and the one before, so "
               "the total follows shifts between parts (as national accounts do). Chained "
               "dollars do not add up: the residual shows by how much."),
    "annual": ("Annual overlap",
               "each year valued at the previous year's average prices and linked at the "
               "annual average (national accounts practice for monthly and quarterly "
               "figures). The parts do not add up exactly: the residual shows by how much."),
}
BASES: dict[str, str] = {
    "period": "On the period before",
    "yoy": "On the same period a year earlier",
    "annual": "Annual totals on the year before",
}
CONTRIB_PERIODS = 36  # periods the contributions chart shows (annual basis: every year)
TABLE_PERIODS = 4     # periods the board-pack table on screen shows (the workbook: all)


def is_parts(key: Any) -> bool:
    return isinstance(key, str) and key.startswith(PARTS + "|")


def parts_options(ws: Workspace) -> list[dict[str, str]]:
    """One 'total of parts, each by its own deflator' choice per group of like series
    (same frequency, kind and unit), naming the parts it holds."""
    opts = []
    for (_, _, unit), names in total_groups(ws).items():
        s = ws.series[names[0]]
        opts.append({"label": f"Total of parts, each by its own deflator: {parts_text(names)} "
                              f"({unit or 'unit not stated'}, {s.frequency.describe()})",
                     "value": f"{PARTS}|{names[0]}"})
    return opts


def parts_of(ws: Workspace, key: str) -> list[str]:
    """The parts a 'total of parts' choice holds."""
    return total_members(ws, key.split("|", 1)[1] if "|" in key else None)


@dataclass(frozen=True)
class PairChoice:
    """One part's deflator picker: the deflators that can serve it, the value to show, and
    why the others are not offered."""

    part: str
    options: tuple[dict[str, Any], ...]
    value: str
    not_offered: tuple[str, ...]   # why some deflators cannot (fully) serve, in words
    why: Any = None                # the same as a closed list under the picker


def _saved_pairs(ws: Workspace, parts: list[str]) -> dict[str, str] | None:
    """The saved total's pairs when it is a total of these parts (else None)."""
    from pipeline.workbook import saved_total

    spec = saved_total(ws)
    if spec is None or not set(spec["pairs"]) & set(parts):
        return None
    return spec["pairs"]


def pair_choices(ws: Workspace, key: str, base: str | None, freq: str | None,
                 current: dict[str, Any] | None = None) -> list[PairChoice]:
    """Each part of the total with every deflator judged for it by the serve check at the
    chosen base and result frequency (``_shared.view.deflator_choices``: those that cannot
    deflate it disabled, with the reason), plus 'leave this part out'. The value shown: the
    one on screen if still usable, else the saved total's pair, else the screen's one
    deflator, else the first deflator that serves every period. No interpolation: a
    deflator less frequent than the results would need it (say so with 'Show as')."""
    parts = parts_of(ws, key)
    saved = _saved_pairs(ws, parts)
    current = current or {}
    out = []
    for name in parts:
        ch = deflator_choices(ws, [ws.series[name]], base, to=freq or "auto")
        options = [*ch.options, {"label": "Leave this part out of the total",
                                 "value": LEAVE_OUT}]
        usable = [*ch.usable, LEAVE_OUT]
        serving = [n for n in ch.usable if n in ch.fits and ch.fits[n].verdict == "serves"]
        preferred = [current.get(name)]
        if saved is not None:
            preferred.append(saved.get(name, LEAVE_OUT))
        preferred += [ws.settings.get("deflator"), *serving]
        value = next((v for v in preferred if v in usable), usable[0])
        out.append(PairChoice(name, tuple(options), value, ch.notes, choices_view(ch)))
    return out


def saved_chain(ws: Workspace, current: Any) -> str:
    """The chain choice when a workspace opens: the saved total's, else the one shown."""
    from pipeline.workbook import saved_total

    spec = saved_total(ws)
    if spec is not None and spec["chain"] in CHAINS:
        return spec["chain"]
    return current if current in CHAINS else "none"


def pair_values(pair_ids: Any, values: Any) -> dict[str, Any]:
    """The pickers' values by part, from a pattern-matching callback's ids and values."""
    return {i["part"]: v for i, v in zip(pair_ids or [], values or [], strict=False)
            if isinstance(i, dict) and "part" in i}


def chosen_pairs(ws: Workspace, key: Any, base: Any, freq: Any, current: dict[str, Any]
                 ) -> dict[str, Any]:
    """The parts' deflators the pickers of :func:`pairs_panel` show for this base and
    result frequency (``current`` kept where it still serves); ``current`` itself for a
    single series or when the total cannot be formed (the computation then says why)."""
    if not is_parts(key):
        return current
    try:
        return {c.part: c.value for c in pair_choices(ws, key, base, freq, current)}
    except RealbasisError:
        return current


def pairs_panel(ws: Workspace, key: Any, base: Any, freq: Any, current: dict[str, Any]
                ) -> tuple[Any, bool, bool]:
    """The pickers of a total of parts (one per part), whether the parts box is hidden,
    and whether the one-deflator field is hidden."""
    from dash import dcc

    from ... import ids
    from ...components import field

    if not is_parts(key):
        return [], True, False
    try:
        choices = pair_choices(ws, key, base, freq, current)
    except RealbasisError as err:
        return problems_view(error_dicts(err), title="Cannot total"), False, True
    rows = []
    for c in choices:
        pid = ids.rt_pair(c.part)
        # the label points at the control's id as the browser sees it (Dash writes a
        # pattern-matching id as JSON with sorted keys)
        dom_id = json.dumps(pid, sort_keys=True, separators=(",", ":"))
        box = field(c.part, dcc.Dropdown(id=pid, options=list(c.options), value=c.value,
                                         clearable=False, className="rb-dropdown"), dom_id)
        if c.why is not None:
            box.children = [*box.children, c.why]
        rows.append(box)
    return rows, False, True


@dataclass(frozen=True)
class TotalComputed:
    total: Any                       # pipeline.totals.TotalResult
    pairs: dict[str, str]            # the parts held, each with its deflator
    left_out: tuple[str, ...]        # parts of the group left out of the total
    used: dict[str, str]             # index vintages used
    notes: tuple[str, ...]           # where parts were cut to their deflator's span
    base: str
    unit: str
    bands: tuple[BandView, ...]


def resolve_pairs(ws: Workspace, key: str, values: dict[str, Any] | None, base: str | None,
                  freq: str | None) -> dict[str, str]:
    """Every part's deflator (or LEAVE_OUT): the pickers' values, filled in with the
    defaults of :func:`pair_choices` for parts without one (the pickers are built after the
    first computation)."""
    parts = parts_of(ws, key)
    values = {k: v for k, v in (values or {}).items() if k in parts and v}
    if all(p in values for p in parts):
        return {p: str(values[p]) for p in parts}
    return {c.part: c.value for c in pair_choices(ws, key, base, freq, values)}


def compute_total(ws: Workspace, key: str, values: dict[str, Any] | None, chain: str | None,
                  base: str | None, freq: str | None) -> TotalComputed:
    """The total of the parts, each deflated by its own deflator, put together additively
    or chain-linked (pipeline.workbook.workspace_total -> pipeline.totals.total_of_parts),
    with the revision band of every deflator held in several vintages."""
    from pipeline.compare import trim_to_cover
    from pipeline.workbook import workspace_total

    pairs = resolve_pairs(ws, key, values, base, freq)
    chosen = {p: d for p, d in pairs.items() if d != LEAVE_OUT}
    left = tuple(p for p, d in pairs.items() if d == LEAVE_OUT)
    if not chosen:
        raise fail(UI005, "every part is left out of the total",
                   expected="a deflator for at least one part", found="no part chosen",
                   fix="Pick a deflator for the parts to total.", remedy="part_pairs")
    first = ws.series[next(iter(chosen))]
    base_text = base_for(first, base)
    total, used, notes = workspace_total(ws, base=base_text, pairs=chosen,
                                         chain=chain or "none", to=freq or "auto")
    notes = [n.replace(" is exported from ", " is shown from ") for n in notes]
    bands = []
    for d in dict.fromkeys(chosen.values()):
        parts = [p for p, dd in chosen.items() if dd == d]
        status = total.part_status[:, [total.part_names.index(p) for p in parts]]
        if not (status == 1).any():  # nothing of these parts rests on a preliminary value
            continue
        index = ws.indexes[d][used.get(d) or latest_vintage(ws.indexes[d])]
        money = [trim_to_cover(ws.series[p], [index])[0] for p in parts]  # pipeline.compare
        bands.append(revision_band_for(ws, d, money, base_text, current=used.get(d),
                                       to=total.frequency))
    return TotalComputed(total, chosen, left, used, tuple(notes), base_text,
                         total.unit or "unit not stated", tuple(bands))


def total_title(t: TotalComputed) -> str:
    return (f"Total of {len(t.pairs):,} part(s) ({parts_text(list(t.pairs))}), each by its "
            f"own deflator, in "
            f"{t.total.dollars_label} ({t.unit}): {t.total.chain_words}")


def holds_text(t: TotalComputed) -> str:
    held = "; ".join(f"{p} by {d}" for p, d in t.pairs.items())
    out = f"This total holds {len(t.pairs):,} part(s): {held}."
    if t.left_out:
        out += f" Left out: {parts_text(t.left_out)}."
    return out


TABLE_COLUMNS = (
    Column("period", "Period"),
    Column("component", "Part"),
    Column("nominal", "Nominal", "number", 1),
    Column("real", "Real", "number", 1),
    Column("real_growth", "Real growth", "percent", 2),
    Column("contribution_pp", "Contribution (percentage points)", "number", 2),
    Column("status", "Status"),
)


def _statuses(ranks: Any) -> list[str]:
    from pipeline.model import STATUSES

    return [STATUSES[int(r)] for r in ranks]


def contributions_view(t: TotalComputed, basis: str) -> tuple[Any, Any]:
    """The contributions chart (stacked bars in percentage points adding up to the
    total's real growth, the line) and the board-pack table of the latest periods."""
    total = t.total
    contrib = total.contributions_frame(basis)
    growth = total.growth_frame(basis)["total"]
    tbl = total.table(basis, status=True)
    status = tbl[tbl["component"] == "total"].set_index("period")["status"]
    keep = contrib.notna().any(axis=1) | growth.notna()
    contrib, growth = contrib[keep], growth[keep]
    many = basis != "annual" and len(contrib) > CONTRIB_PERIODS
    if many:
        contrib, growth = contrib.iloc[-CONTRIB_PERIODS:], growth.iloc[-CONTRIB_PERIODS:]
    words = BASES.get(basis, basis).lower()
    span = f", latest {CONTRIB_PERIODS:,} periods" if many else ""
    fig = contributions_figure(
        contrib, growth, status=[str(status.get(p, "final")) for p in contrib.index],
        title=f"Contributions to the total's real growth, {words} (percentage points; "
              f"{total.dollars_label}{span})",
        growth_label=f"Total's real growth (%, {total.dollars_label})")
    latest = [p for p in dict.fromkeys(tbl["period"]) if p in set(contrib.index)][-TABLE_PERIODS:]
    rows = tbl[tbl["period"].isin(latest)].copy()
    rows["real_growth"] = rows["real_growth_pct"] / 100.0
    rows = rows.iloc[::-1]
    order = {p: i for i, p in enumerate(reversed(latest))}
    comp = {c: i for i, c in enumerate([*total.part_names, "total", "residual"])}
    rows = rows.assign(_p=rows["period"].map(order), _c=rows["component"].map(comp))
    rows = rows.sort_values(["_p", "_c"]).drop(columns=["_p", "_c"])
    caption = (f"Board-pack table, {words}, in {total.dollars_label} ({t.unit}): the parts' "
               "contributions add up to the total's real growth; latest "
               f"{len(latest):,} period(s), newest first (the audit workbook's Contributions "
               "sheets hold every period).")
    return fig, table(TABLE_COLUMNS, rows.to_dict("records"), caption=caption)


def total_outputs(ws: Workspace, key: str, values: dict[str, Any] | None, chain: str | None,
                  basis: str | None, base: str | None, freq: str | None) -> tuple[Any, ...]:
    """What Real terms shows for a total of parts: title, the chart of parts, total and
    residual, notes, the total's growth table, the method note, the contributions chart,
    the board-pack table and the contributions box's style."""
    try:
        t = compute_total(ws, key, values, chain, base, freq)
    except RealbasisError as err:
        return ("These figures cannot be computed", empty_figure("See the problems below."),
                problems_view(error_dicts(err), title="Cannot compute"), None,
                method_view(()), empty_figure(""), None, HIDDEN)
    total = t.total
    levels = total.levels_frame()
    part_status = {name: _statuses(total.part_status[:, i])
                   for i, name in enumerate(total.part_names)}
    total_status = _statuses(total.total_status)
    resid = ("Residual: total minus the sum of the parts (0: an additive total adds up)"
             if total.chain == "none" else
             "Residual: chained total minus the sum of the parts")
    fig = total_figure(levels, parts=list(total.part_names), part_status=part_status,
                       total_status=total_status,
                       title=f"Parts, total and residual in {total.dollars_label} ({t.unit})",
                       unit=t.unit, total_label=f"Total ({total.dollars_label})",
                       residual_note=resid)
    try:
        contrib_fig, contrib_table = contributions_view(t, basis or "period")
    except RealbasisError as err:
        contrib_fig, contrib_table = empty_figure("See the problems below."), problems_view(
            error_dicts(err), title="Cannot compute contributions")
    periods = total.periods
    nominal = pd.Series(total.total_nominal, index=periods)
    real = pd.Series(total.total_real, index=periods)
    try:
        summary = growth_summary(nominal, real, total.frequency, annualise=False)
    except RealbasisError:
        summary = []
    growth = html.Div(table(GROWTH_COLUMNS, summary,
                            caption=f"Growth of the total ({total.dollars_label}): (1 + nominal) "
                                    "= (1 + real) × (1 + prices), prices being the implicit "
                                    "deflator of the total"), className="rb-tables")
    status_note = _status_note(pd.DataFrame({"status": total_status}))
    band_statements = [s for b in t.bands for s in b.statements]
    band_notes = [b.note for b in t.bands if b.note]
    if any(b.available for b in t.bands):
        band_notes.append("The band is drawn on the chart when one series is chosen with its "
                          "deflator.")
    warn = html.Div([notice(holds_text(t), "info"), notice(status_note, "warn"),
                     band_view(band_statements, band_notes),
                     warnings_view(problem_dicts((*total.warnings,
                                                  *(w for b in t.bands for w in b.warnings))))])
    vintages = "; ".join(f"{d}: vintage {v or 'not stated'}" for d, v in t.used.items())
    method = (*total.method_note(), *t.notes,
              *([f"Left out of the total: {parts_text(t.left_out)}."] if t.left_out else []),
              f"Index vintages: {vintages}.",
              *(line for b in t.bands if b.available for line in b.method))
    return (total_title(t), fig, warn, growth, method_view(method), contrib_fig,
            contrib_table, SHOWN)


def screen_outputs(ws: Workspace, series: Any, deflator: Any, base: Any, freq: Any, sa: bool,
                   pairs: dict[str, Any] | None = None, chain: Any = "none",
                   basis: Any = "period", *, interpolate: Any = False,
                   outlay: str | None = None) -> tuple[Any, ...]:
    """Everything the Real terms callback returns, for one series, a total under one
    deflator or a total of parts each by its own deflator: title, figure, notes, growth
    tables, method note, contributions chart, board-pack table, contributions box style."""
    if is_parts(series):
        return total_outputs(ws, series, pairs, chain, basis, base, freq)
    return (*outputs(ws, series, deflator, base, freq, sa, interpolate=interpolate,
                     outlay=outlay), empty_figure(""), None, HIDDEN)
