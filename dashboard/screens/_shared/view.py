"""The view model the screens share: plain, tested functions (no callbacks).

Every screen package (``dashboard/screens/<screen>/view.py``) builds on these; none copies
them and no screen imports another (tests/test_architecture.py):

* **problems**: :func:`problem_dict` / :func:`error_dicts` turn engine problems into plain
  data for :func:`dashboard.components.problems_view`, with the fix in the dashboard's
  words (a remedy key rendered by :data:`dashboard.remedies.SCREEN`);
* **series and indexes in words**: :func:`stretch_text`, :func:`span_text`;
* **picking**: :func:`pick_series` (one series, or ``TOTAL`` = the sum of like series:
  same frequency, kind and unit, :func:`total_groups`), :func:`pick_index` (latest
  vintage unless one is named), the option builders :func:`series_options`,
  :func:`deflator_options` and :func:`choose` (keep a choice while it is offered);
* **fiscal year and period fields**: :func:`fiscal_year`, :func:`fy_start`,
  :func:`fiscal_note` (the method-note line), :func:`period_placeholder` and
  :func:`read_base` — every period field is read by :func:`pipeline.fiscal.read_period`
  with the workspace's fiscal year;
* **frequency**: :func:`frequency_options`, :func:`result_frequency` (the engine's
  :func:`pipeline.compare.result_frequency`: ``auto``, ``native``, ``Q``, ``A``,
  ``FY-<month>``);
* **base period**: :func:`default_base`, :func:`base_fits`, :func:`base_after_series_change`,
  :func:`base_for`, :func:`shown_base`;
* **deflators that serve**: :func:`deflator_choices` (every index judged by
  :func:`pipeline.compare.serve_check`, and for outlay-weighted authority by
  :func:`pipeline.outlay.deflate_authority`: options that cannot serve are disabled with
  the reason, notes say what would make them serve, projections are proposed),
  :func:`choices_view`, the interpolation switch (:data:`INTERPOLATE_LABEL`,
  :func:`interpolation`);
* **several deflators**: :func:`comparison` (:func:`pipeline.compare.compare_deflators`;
  used by Deflator spread and by the share screen's chart image);
* **outlay rates**: the per-series box in percent (:func:`outlay_field`,
  :func:`read_outlay_field`, :func:`save_outlay`, :func:`saved_outlay`), checked and
  saved by :mod:`pipeline.outlay`;
* numbers and progress: :func:`isfinite`, :data:`ProgressFn`;
* **adding series** to a workspace: :func:`add_intake` (Data intake, and the demo
  workspace built by :mod:`dashboard.demo`).

Functions take and return plain data (workspaces, engine results, lists of dicts) and call
the engine (:mod:`pipeline`) for every computation.
"""

from __future__ import annotations

import calendar
import dataclasses
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import pandas as pd

from pipeline.errors import Problem, RealbasisError, fail, register
from pipeline.fiscal import FiscalYear, Use, examples, read_period, workspace_fiscal_year
from pipeline.model import Frequency, Series, Workspace
from pipeline.periods import Span

UI004 = register("UI004", "series cannot be totalled")
UI005 = register("UI005", "nothing chosen to compute")

TOTAL = "__total__"


# --------------------------------------------------------------------------- problems


def problem_dict(p: Problem) -> dict[str, Any]:
    """A problem as plain data for the views (and the browser): never HTML."""
    from pipeline.errors import fix_text

    from ...remedies import SCREEN

    d = p.as_dict()
    d["fix"] = fix_text(p, SCREEN)
    d["where_text"] = p.where.render()
    return d


def problem_dicts(problems: Sequence[Problem]) -> list[dict[str, Any]]:
    return [problem_dict(p) for p in problems]


def error_dicts(err: RealbasisError) -> list[dict[str, Any]]:
    return problem_dicts(err.problems)


# --------------------------------------------------------------------------- series in words


def stretch_text(s: Series) -> str:
    st = s.stretches()
    parts = []
    if st.get("preliminary"):
        a, b = st["preliminary"]  # type: ignore[misc]
        parts.append(f"preliminary {a}–{b}" if a != b else f"preliminary {a}")
    if st.get("projected"):
        a, b = st["projected"]  # type: ignore[misc]
        parts.append(f"projected {a}–{b}" if a != b else f"projected {a}")
    return "; ".join(parts) or "all final"


def span_text(s: Series) -> str:
    values = s.values.dropna()
    if values.empty:
        return "no values"
    return f"{s.frequency.label(values.index[0])} – {s.frequency.label(values.index[-1])}"


# --------------------------------------------------------------------------- picking


def latest_vintage(vintages: Mapping[str, Series]) -> str:
    """The newest vintage key (ISO dates sort as text; '' = unknown sorts first)."""
    return sorted(vintages)[-1]


def pick_index(ws: Workspace, name: str, vintage: str | None = None) -> Series:
    vins = ws.indexes.get(name)
    if not vins:
        raise fail(UI005, f"no price index called {name!r} in this workspace",
                   expected="an index listed on the deflator shelf", found=repr(name),
                   fix="Choose another deflator or upload the index on the intake screen.")
    key = latest_vintage(vins) if vintage is None else vintage
    if key not in vins:
        raise fail(UI005, f"index {name!r} has no vintage {key!r}",
                   expected=", ".join(sorted(vins)), found=repr(key),
                   fix="Choose one of the listed vintages.")
    return vins[key]


def series_options(ws: Workspace, *, with_total: bool = True) -> list[dict[str, str]]:
    opts = [{"label": f"{name} ({s.unit or 'unit not stated'}, {s.frequency.describe()})",
             "value": name} for name, s in ws.series.items()]
    if with_total:
        for (_, _, unit), names in total_groups(ws).items():
            s = ws.series[names[0]]
            opts.append({"label": f"Total of {len(names):,} series under one deflator: "
                                  f"{parts_text(names)} ({unit or 'unit not stated'}, "
                                  f"{s.frequency.describe()})",
                         "value": f"{TOTAL}|{names[0]}"})
    return opts


def parts_text(names: Sequence[str], most: int = 6) -> str:
    """'A, B, C and D' (the first ``most``, then 'and n more')."""
    names = list(names)
    if len(names) > most:
        return ", ".join(names[:most]) + f" and {len(names) - most:,} more"
    return names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]


def choose(current: Any, options: list[dict[str, Any]], *preferred: Any) -> Any:
    """Keep the current choice if still offered, else the first preferred one offered,
    else the first option."""
    values = [o["value"] for o in options]
    for v in (current, *preferred):
        if v in values:
            return v
    return values[0] if values else None


def total_groups(ws: Workspace) -> dict[tuple[str, str, str], list[str]]:
    """Money series that can be totalled: same frequency, kind and unit."""
    groups: dict[tuple[str, str, str], list[str]] = {}
    for name, s in ws.series.items():
        groups.setdefault((str(s.frequency), s.kind, s.unit or ""), []).append(name)
    return {k: v for k, v in groups.items() if len(v) > 1}


def total_members(ws: Workspace, group_of: str | None = None) -> list[str]:
    """The series a total sums: those sharing the frequency, kind and unit of
    ``group_of`` (default: the largest such group). UI004 when no two series can be
    totalled."""
    groups = total_groups(ws)
    if not groups:
        raise fail(UI004, "no two series share a frequency, kind and unit, so none can be "
                          "totalled", expected="series of one frequency and unit",
                   found=", ".join(f"{n} ({s.unit}, {s.frequency})" for n, s in ws.series.items()),
                   fix="Choose a single series.")
    names = max(groups.values(), key=len)
    if group_of is not None:
        for members in groups.values():
            if group_of in members:
                names = members
    return names


def pick_series(ws: Workspace, key: str, group_of: str | None = None) -> Series:
    """A money series by name, or the total of all series that share the frequency,
    kind and unit of ``group_of`` (default: the largest such group)."""
    if key.startswith(TOTAL + "|"):
        key, group_of = TOTAL, key.split("|", 1)[1]
    if key != TOTAL:
        s = ws.series.get(key)
        if s is None:
            raise fail(UI005, f"no series called {key!r} in this workspace",
                       expected="a series listed on the intake screen", found=repr(key),
                       fix="Choose another series.")
        return s
    names = total_members(ws, group_of)
    parts = [ws.series[n] for n in names]
    first = parts[0]
    frame = pd.concat([p.values for p in parts], axis=1)
    total = frame.sum(axis=1, min_count=len(parts))  # a period missing in any part is missing
    status = None
    if any(p.status is not None for p in parts):
        from pipeline.model import STATUS_RANK, STATUSES

        ranks = pd.concat([p.status_or_final().map(STATUS_RANK) for p in parts], axis=1).max(axis=1)
        status = ranks.map(dict(enumerate(STATUSES))).astype(object)
    return Series(name=f"Total of {len(parts)} series ({parts_text(names)})",
                  values=total.astype(float),
                  frequency=first.frequency, kind=first.kind, unit=first.unit, status=status,
                  notes=(f"sum of: {', '.join(names)}",))


# --------------------------------------------------------------------------- fiscal year, period fields


def fiscal_year(ws: Workspace) -> FiscalYear:
    """The workspace's fiscal year (:func:`pipeline.fiscal.workspace_fiscal_year`)."""
    return workspace_fiscal_year(ws)


def fy_start(ws: Workspace) -> int | None:
    """The workspace's fiscal-year start month, or None while unknown."""
    return fiscal_year(ws).month


def fiscal_note(ws: Workspace) -> tuple[str, ...]:
    """The method-note line on the workspace's fiscal year (none when it has none)."""
    fy = fiscal_year(ws)
    return fy.method_note() if fy.known or fy.source == "disagree" else ()


def period_placeholder(ws: Workspace | None) -> str:
    """What a period field takes, with fiscal labels once the workspace's fiscal year is
    known (:func:`pipeline.fiscal.examples`)."""
    month = fy_start(ws) if ws is not None else None
    if month is not None and month != 1:
        return "e.g. FY2025, 2024-25 or FY2025..FY2027"
    return "e.g. " + ", ".join(examples(month).split(", ")[:3])


def read_base(ws: Workspace, text: str, frequency: Frequency | None = None, *,
              use: Use = "base") -> Span:
    """A period field read with the workspace's fiscal year (:func:`pipeline.fiscal.
    read_period`): ``FY2025``, ``2024-25``, ``2024Q1``, ranges ``A..B``."""
    return read_period(text, fy_start(ws), frequency=frequency, use=use)


# --------------------------------------------------------------------------- result frequency


def frequency_options(ws: Workspace, series: Series | None) -> list[dict[str, str]]:
    """Frequencies a result can be shown at: the series' own and the coarser ones; fiscal
    years are the workspace's (and any other start a fiscal series of it has)."""
    opts = [{"label": "Automatic (the series' own; the deflator's if less frequent)",
             "value": "auto"}, {"label": "As the series", "value": "native"}]
    if series is None:
        return opts
    ppy = series.frequency.periods_per_year
    starts = {s.frequency.fy_start for s in ws.series.values() if s.frequency.is_fiscal}
    month = fy_start(ws)
    if month is not None and month != 1:
        starts.add(month)
    if ppy > 4:
        opts.append({"label": "Quarters", "value": "Q"})
    if ppy > 1:
        opts.append({"label": "Calendar years", "value": "A"})
        for m in sorted(starts):
            opts.append({"label": f"Fiscal years starting {calendar.month_name[m]}",
                         "value": f"FY-{m}"})
    return opts


def result_frequency(ws: Workspace, choice: str | None, series: Series | None = None,
                     deflators: Sequence[Series] = ()) -> Frequency | None:
    """The result frequency chosen under 'Show as' (:func:`pipeline.compare.
    result_frequency`, with the workspace's fiscal year)."""
    from pipeline.compare import result_frequency as engine_frequency

    return engine_frequency(choice or "auto", series, deflators, fy_start=fy_start(ws))


# --------------------------------------------------------------------------- base period


def default_base(series: Series) -> str:
    """A sensible first base: the last complete calendar or fiscal year of the series."""
    values = series.values.dropna()
    if values.empty:
        return ""
    final = series.status_or_final().reindex(values.index) == "final"
    if final.any():  # proposed or projected amounts do not make a base
        values = values[final.to_numpy()]
    f = series.frequency
    if f.code in ("A", "FY"):
        return f.label(values.index[-1])
    last = values.index[-1]
    per = f.periods_per_year
    if f.is_fiscal:
        year_end = last.qyear if f.code == "Q" else last.year
        complete = last.quarter == 4 if f.code == "Q" else True
        year = year_end if complete else year_end - 1
        return f"FY{year}"
    complete = (last.month == 12) if per == 12 else (last.quarter == 4)
    return str(last.year if complete else last.year - 1)


def base_fits(series: Series, base: str | None, fy: int | None = None) -> bool:
    """Whether ``base`` is made of whole periods of the series, read with the fiscal
    year ``fy`` (:func:`pipeline.fiscal.read_period`)."""
    if not (base or "").strip():
        return True
    try:
        read_period(str(base), fy, frequency=series.frequency, use="base")
    except RealbasisError:
        return False
    return True


def base_after_series_change(ws: Workspace, series_key: str | None, base: str | None
                             ) -> str | None:
    """The base to show once another series is chosen: the current one if it fits the
    series' periods, else the series' default (None = leave the field as it is)."""
    if not series_key:
        return None
    try:
        s = pick_series(ws, series_key)
    except RealbasisError:
        return None
    return None if base_fits(s, base, fy_start(ws)) else default_base(s)


def base_applies(ws: Workspace, base: str | None, series: Sequence[Series]) -> bool:
    """Whether a typed base still applies in ``ws``: it reads with the workspace's fiscal
    year as whole periods of each of ``series`` and lies within the months they cover.
    With no series (an empty workspace) no base applies."""
    if not series or not (base or "").strip():
        return False
    fy = fy_start(ws)
    for s in series:
        values = s.values.dropna()
        if values.empty:
            return False
        try:
            span = read_period(str(base), fy, frequency=s.frequency, use="base")
        except RealbasisError:
            return False
        first = int(values.index[0].asfreq("M", how="start").ordinal)
        last = int(values.index[-1].asfreq("M", how="end").ordinal)
        if span.first_month < first or span.last_month > last:
            return False
    return True


_SAVED_BASE = object()


def shown_base(ws: Workspace, current: str | None, series: Any = None, *,
               saved: Any = _SAVED_BASE) -> str:
    """The base field's value when a workspace opens or changes: the one typed while it
    still applies to the chosen series of this workspace (:func:`base_applies`), else the
    saved one (``saved``, default the workspace's saved base), else empty. So a base typed
    in one workspace does not follow the user into another it does not fit (an empty
    workspace shows no base)."""
    saved_text = str((ws.settings.get("base") if saved is _SAVED_BASE else saved) or "")
    if not (current or "").strip():
        return saved_text
    chosen: list[Series] = []
    keys = [series] if isinstance(series, str) else list(series or [])
    for key in keys:
        try:
            chosen.append(pick_series(ws, str(key)))
        except RealbasisError:  # a total of parts: '<kind>|<first part>'
            first = ws.series.get(str(key).split("|", 1)[-1])
            if first is not None:
                chosen.append(first)
    if not keys and ws.series:
        chosen = list(ws.series.values())[:1]
    return str(current) if base_applies(ws, current, chosen) else saved_text


def base_for(series: Series, requested: str | None) -> str:
    return (requested or "").strip() or default_base(series)


# --------------------------------------------------------------------------- numbers


def isfinite(x: object) -> bool:
    try:
        return math.isfinite(float(x))  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return False


# A progress callback of a long computation: progress(done, total).
ProgressFn = Callable[[int, int], None]


# --------------------------------------------------------------------------- deflators that serve

INTERPOLATE_LABEL = " Fill in a less frequent deflator (Denton, keeping its period averages)"
"""The words of the interpolation switch beside every deflator picker (Real terms,
Deflator spread, Budget table); dashboard/remedies.py points at them."""
INTERPOLATE_VALUE = "denton"


def interpolation_switch(switch_id: str) -> Any:
    """The interpolation switch shown under a deflator picker (off by default)."""
    from dash import dcc

    return dcc.Checklist(id=switch_id, options=[{"label": INTERPOLATE_LABEL,
                                                 "value": INTERPOLATE_VALUE}],
                         value=[], className="rb-check rb-switch", inline=True,
                         inputStyle={"marginRight": "6px"})


def interpolation(flag: Any) -> bool:
    """The interpolation switch (a checklist value, or a bool) as the engine's choice:
    True means proportional Denton (:func:`pipeline.benchmark.interpolate`)."""
    if isinstance(flag, list | tuple | set):
        return INTERPOLATE_VALUE in flag
    return bool(flag)


_VERDICT_RANK = {"serves": 0, "serves_in_part": 1, "needs_interpolation": 2,
                 "needs_projection": 3, "cannot": 4}


@dataclass(frozen=True)
class DeflatorChoices:
    """The deflators a picker offers for some series, base and result frequency, as the
    engine's serve check (:func:`pipeline.compare.serve_check`) judges them.

    ``options``: every price index of the workspace; those that cannot deflate the series
    are disabled, with the reason in the label's tail and the tooltip. ``usable``: the
    names that can (all periods or part of them). ``notes``: one sentence per deflator
    that does not fully serve — why, and what would make it serve, in this screen's
    words. ``project_until``: deflator -> the period a projection must reach for it to
    serve (the proposal). ``summary``: the heading of the notes."""

    options: list[dict[str, Any]]
    usable: tuple[str, ...]
    notes: tuple[str, ...] = ()
    project_until: Mapping[str, str] = dataclasses.field(default_factory=dict)
    summary: str = ""
    fits: Mapping[str, Any] = dataclasses.field(default_factory=dict)

    def alternatives(self, deflator: str) -> tuple[str, ...]:
        """Other deflators that serve every period as they are."""
        return tuple(n for n, f in self.fits.items()
                     if n != deflator and f.verdict == "serves")


def _plain_option(ws: Workspace, name: str) -> dict[str, Any]:
    vins = ws.indexes[name]
    s = vins[latest_vintage(vins)]
    vin = latest_vintage(vins) or "vintage not stated"
    return {"label": f"{name} ({s.frequency.describe()}, {vin})", "value": name}


def deflator_options(ws: Workspace) -> list[dict[str, Any]]:
    """Every price index of the workspace (latest vintage), unjudged."""
    return [_plain_option(ws, name) for name in ws.indexes]


def _worst_fit(fits: Sequence[Any]) -> Any:
    return max(fits, key=lambda f: _VERDICT_RANK.get(f.verdict, 4))


def deflator_choices(ws: Workspace, series: Sequence[Series], base: str | None, *,
                     to: str | Frequency | None = "auto", interpolate: Any = False,
                     outlay: Mapping[str, Any] | None = None, mark_partial: bool = True
                     ) -> DeflatorChoices:
    """Judge every price index of ``ws`` for ``series`` (one money series, or a budget's
    programs) at ``base`` and result frequency ``to`` (a 'Show as' choice or a
    Frequency), with interpolation allowed or not. With ``outlay`` (series name ->
    outlay rates) a deflator must also reach every outlay year
    (:func:`pipeline.outlay.deflate_authority` is asked; DF022 otherwise).

    When the base cannot be read the options are offered unjudged (the screen shows the
    base problem where the figures would be). ``mark_partial`` False leaves the label of a
    deflator that serves part of the periods as it is (a multi-select shows every chosen
    label; the tooltip and the notes still say it)."""
    from pipeline.compare import VERDICT_WORDS, serve_check

    names = list(ws.indexes)
    plain = deflator_options(ws)
    money = [s for s in series if s is not None]
    if not money or not names:
        return DeflatorChoices(plain, tuple(names))
    fy = fy_start(ws)
    interp = interpolation(interpolate)
    candidates = [pick_index(ws, n) for n in names]
    fits_by: dict[str, list[Any]] = {n: [] for n in names}
    try:
        for s in _union_by_frequency(money):
            span = read_base(ws, base_for(s, base))
            check = serve_check(s, candidates, span, to=_choice_for(ws, to, s, candidates),
                                fy_start=fy, interpolate=interp)
            for n, d in zip(names, candidates, strict=True):
                fits_by[n].append(check.fit(d.name))
    except RealbasisError:
        return DeflatorChoices(plain, tuple(names))
    fits = {n: _worst_fit(v) for n, v in fits_by.items()}
    until: dict[str, str] = {n: f.project_until for n, f in fits.items() if f.project_until}
    extra: dict[str, str] = {}
    partial: dict[str, bool] = {}
    if outlay:
        for n, d in zip(names, candidates, strict=True):
            if fits[n].usable:
                reason, proposal, serves = _outlay_reach(ws, money, d, base, to, interp,
                                                         outlay)
                if reason:
                    extra[n] = reason
                    partial[n] = serves
                    if proposal:
                        until[n] = proposal
    label_of = {o["value"]: o["label"] for o in plain}
    options: list[dict[str, Any]] = []
    notes: list[str] = []
    who = money[0].name if len(money) == 1 else f"the {len(money):,} programs"
    for n in names:
        f = fits[n]
        if n in extra:
            if partial[n]:
                options.append({"label": label_of[n] + (" — serves part of the years"
                                                        if mark_partial else ""),
                                "value": n, "title": extra[n]})
            else:
                options.append({"label": f"{label_of[n]} — does not reach every outlay "
                                         "year", "value": n, "disabled": True,
                                "title": extra[n]})
            notes.append(extra[n])
            continue
        words = VERDICT_WORDS[f.verdict]
        plain_label = f.verdict == "serves" or (f.usable and not mark_partial)
        option = {"label": label_of[n] + ("" if plain_label else f" — {words}"), "value": n}
        if not f.usable:
            option["disabled"] = True
        if f.reason:
            option["title"] = f.reason
        options.append(option)
        if f.verdict != "serves":
            fix = problem_dict(f.as_problem(who))["fix"]
            notes.append(f"{f.text()}. {fix}".replace("..", "."))
    usable = tuple(n for n in names if fits[n].usable and partial.get(n, True))
    blocked = len(names) - len(usable)
    partly = sum(1 for n in usable if fits[n].verdict != "serves" or n in extra)
    summary = ""
    if notes:
        parts = []
        if blocked:
            parts.append(f"{blocked:,} of {len(names):,} deflators cannot deflate {who} as "
                         "asked")
        if partly:
            parts.append(f"{partly:,} cover only part of its periods")
        summary = "; ".join(parts) + ": why, and what would make them serve"
    return DeflatorChoices(options, usable, tuple(notes), until, summary, fits)


def _union_by_frequency(series: Sequence[Series]) -> list[Series]:
    """One series per frequency spanning every period any of ``series`` has a value in
    (a budget's programs are judged together: a deflator serves them when it covers
    their union)."""
    groups: dict[Frequency, list[Series]] = {}
    for s in series:
        groups.setdefault(s.frequency, []).append(s)
    out = []
    for members in groups.values():
        if len(members) == 1:
            out.append(members[0])
            continue
        frame = pd.concat([m.values for m in members], axis=1)
        first = members[0]
        out.append(Series(name=f"the {len(members):,} programs",
                          values=frame.sum(axis=1, min_count=1).astype(float),
                          frequency=first.frequency, kind=first.kind, unit=first.unit))
    return out


def _choice_for(ws: Workspace, to: str | Frequency | None, s: Series,
                candidates: Sequence[Series]) -> str | Frequency | None:
    """A 'Show as' choice for the serve check: FY codes resolved with the workspace's
    fiscal year; ``auto`` left to the check (judged per deflator)."""
    if isinstance(to, Frequency) or to in (None, "auto", "native"):
        return to
    return result_frequency(ws, str(to), s, candidates)


def outlay_years(rates: Mapping[str, Any], series: Sequence[Series], frequency: Frequency
                 ) -> str | None:
    """The last year an index must reach for the outlays of ``series``' authority at
    ``rates`` (series name -> OutlayRates): :func:`pipeline.outlay.reach_until`, the
    latest over the series."""
    from pipeline.outlay import reach_until

    best: str | None = None
    key = None
    for s in series:
        r = rates.get(s.name)
        label = reach_until(s, r, frequency) if r is not None else None
        if label is None:
            continue
        p = read_period(label, frequency.fy_start if frequency.is_fiscal else None).first_month
        if key is None or p > key:
            best, key = label, p
    return best


def _outlay_reach(ws: Workspace, money: Sequence[Series], d: Series, base: str | None,
                  to: Any, interp: bool, outlay: Mapping[str, Any]
                  ) -> tuple[str | None, str | None, bool]:
    """Whether ``d`` reaches the outlay years of the programs with rates, once the
    authority years whose outlays it cannot reach are left out (as the screens do,
    :func:`cut_to_outlays`): (the reason or None, the year a projection must reach,
    whether it still serves — in part)."""
    from pipeline.outlay import DF022, cut_to_reach, deflate_authority

    rated = [s for s in money if s.name in outlay]
    if not rated:
        return None, None, True
    years = yearly_frequency(ws, to, rated)
    cut = [cut_to_reach(s, [d], outlay[s.name], years) for s in rated]
    until = outlay_years(outlay, rated, years)
    try:
        deflate_authority([c[0] for c in cut], [d], read_base(ws, base_for(rated[0], base)),
                          {s.name: outlay[s.name] for s in rated}, to=years,
                          fy_start=fy_start(ws), interpolate=interp)
    except RealbasisError as err:
        gaps = [p for p in err.problems if p.code == DF022]
        if not gaps:
            return None, None, True
        p = gaps[0]
        return f"{d.name}: {p.message} — {p.found}. {problem_dict(p)['fix']}", until, False
    notes = [n for _, n in cut if n]
    if notes:
        return (f"{d.name}: serves part of the years — " + " ".join(notes)
                + f" Projected until {until} it would serve them all. "
                + screen_words("project_index"), until, True)
    return None, None, True


def screen_words(key: str) -> str:
    from ...remedies import SCREEN

    return SCREEN.get(key, "")


def yearly_frequency(ws: Workspace, to: Any, series: Sequence[Series]) -> Frequency:
    """Years for authority spent at outlay rates: the chosen yearly frequency, else the
    series' own when yearly, else the workspace's fiscal years, else calendar years."""
    from pipeline.model import ANNUAL

    if isinstance(to, Frequency) and to.code in ("A", "FY"):
        return to
    if isinstance(to, str) and to not in ("auto", "native"):
        f = result_frequency(ws, to, series[0] if series else None)
        if f is not None and f.code in ("A", "FY"):
            return f
    own = {s.frequency for s in series}
    if len(own) == 1 and next(iter(own)).code in ("A", "FY"):
        return next(iter(own))
    month = fy_start(ws)
    return Frequency("FY", month) if month is not None and month != 1 else ANNUAL


def choices_view(choices: DeflatorChoices) -> Any:
    """The notes under a deflator picker: a closed list, why each deflator not offered
    (or offered for part of the periods) cannot serve and what would make it serve."""
    from dash import html

    if not choices.notes:
        return None
    return html.Details([html.Summary(choices.summary),
                         html.Ul([html.Li(n) for n in choices.notes])],
                        className="rb-details rb-why")


# --------------------------------------------------------------------------- several deflators


def comparison(ws: Workspace, series_key: str, deflators: Sequence[str], base: str | None, *,
               to: str | None = "auto", measure: str = "yoy", interpolate: Any = False
               ) -> Any:
    """One series under every chosen deflator that can serve it, the verdict over those
    and the others named with their reasons (:func:`pipeline.compare.compare_deflators`);
    used by Deflator spread and by the share screen's chart image."""
    from pipeline.compare import compare_deflators

    s = pick_series(ws, series_key)
    ds = [pick_index(ws, name) for name in deflators]
    span = read_base(ws, base_for(s, base))
    to_choice: str | Frequency | None = to or "auto"
    if to_choice not in ("auto", "native"):
        to_choice = result_frequency(ws, str(to_choice), s, ds)
    return compare_deflators(s, ds, span, to=to_choice, fy_start=fy_start(ws),
                             interpolate=interpolation(interpolate), measure=measure)


# --------------------------------------------------------------------------- outlay rates


def outlay_field(ws: Workspace, series_key: str | None) -> str:
    """The outlay-rate box's text for a series: its saved rates in percent
    ('50, 30, 20'), or empty."""
    from pipeline.outlay import SETTING, rates_by_series

    if not series_key:
        return ""
    try:
        saved = rates_by_series(ws.settings.get(SETTING))
    except RealbasisError:
        return ""
    r = saved.get(series_key)
    return percent_text(r.rates) if r is not None else ""


def percent_text(rates: Sequence[float]) -> str:
    return ", ".join(f"{100 * r:.10g}" for r in rates)


def read_outlay_field(text: str | None, series: str | None = None) -> Any:
    """The outlay-rate box read as percent (the box says '% spent each year'): '50, 30,
    20' or '50%, 30%, 20%'; bare shares that add up to 1 ('0.5, 0.3, 0.2') are read as
    shares. Checked by :func:`pipeline.outlay.outlay_rates` (DF020, DF021), whose problem
    then shows the text as typed. None when the box is empty."""
    from pipeline.outlay import outlay_rates

    raw = (text or "").strip()
    if not raw:
        return None
    parts = [p.strip() for p in raw.replace(";", ",").replace(" ", ",").split(",") if p.strip()]
    bare = [p for p in parts if not p.endswith("%")]
    as_shares = False
    if len(bare) == len(parts):
        try:
            as_shares = abs(sum(float(p) for p in parts) - 1.0) <= 1e-9
        except ValueError:
            as_shares = False
    given = parts if as_shares else [p if p.endswith("%") else f"{p}%" for p in parts]
    try:
        return outlay_rates(given, series=series)
    except RealbasisError as err:
        raise RealbasisError([_typed(p, raw) for p in err.problems]) from None


def _typed(p: Problem, raw: str) -> Problem:
    """An outlay-rate problem restated for a box in percent: what was typed, in percent."""
    if p.code == "DF020":
        try:
            values = [float(x.rstrip("%")) for x in
                      raw.replace(";", ",").replace(" ", ",").split(",") if x.strip()]
            total = f"; they add up to {sum(values):.10g} %"
        except ValueError:
            total = ""
        return dataclasses.replace(
            p, message="the outlay rates do not add up to 100 %",
            expected="percentages of the authority spent in its year and the following "
                     "ones, adding up to 100 (e.g. 50, 30, 20)",
            found=f"{raw!r}{total}",
            fix="Correct the percentages so that they add up to exactly 100.")
    return dataclasses.replace(p, found=f"{p.found} in {raw!r}",
                               expected="a percentage >= 0 for each outlay year, e.g. "
                                        "50, 30, 20")


def saved_outlay(ws: Workspace) -> dict[str, Any]:
    """Every series' saved outlay rates (series name -> OutlayRates)."""
    from pipeline.outlay import SETTING, rates_by_series

    try:
        return rates_by_series(ws.settings.get(SETTING))
    except RealbasisError:
        return {}


def save_outlay(ws: Workspace, series_key: str, text: str | None) -> Workspace:
    """A copy of ``ws`` with the series' outlay rates saved (empty text clears them)."""
    from pipeline.outlay import with_outlay_rates

    rates = read_outlay_field(text, series_key)
    return with_outlay_rates(ws, series_key, list(rates.rates) if rates else None)  # type: ignore[return-value]

# --------------------------------------------------------------------------- adding series


def add_intake(ws: Workspace, series: Sequence[Series]) -> tuple[Workspace, str]:
    """Put the series of an intake into a workspace: money series by name, price
    indexes by name and vintage. Returns the new workspace (unsaved) and a summary."""
    money = dict(ws.series)
    indexes = {k: dict(v) for k, v in ws.indexes.items()}
    added, replaced = 0, 0
    for s in series:
        if s.kind == "index":
            vins = indexes.setdefault(s.name, {})
            replaced += (s.vintage or "") in vins
            vins[s.vintage or ""] = s
        else:
            replaced += s.name in money
            money[s.name] = s
        added += 1
    n_idx = sum(1 for s in series if s.kind == "index")
    summary = (f"Added {added - n_idx:,} money series and {n_idx:,} index series"
               + (f" ({replaced:,} replaced an earlier one of the same name)" if replaced else "")
               + ".")
    return dataclasses.replace(ws, series=money, indexes=indexes), summary


# --------------------------------------------------------------------------- revision band


@dataclass(frozen=True)
class BandView:
    """What a screen shows of the revision band of one index (and the real figures on it):
    the engine's :class:`pipeline.revision_risk.RevisionBand` (None when the index is held
    in one vintage), the sentences to show, a plain note when there is no band, the method
    lines and the warnings."""

    index: str
    band: Any
    statements: tuple[str, ...]
    note: str | None
    method: tuple[str, ...]
    warnings: tuple[Problem, ...]

    @property
    def available(self) -> bool:
        return self.band is not None and bool(self.band.available)

    def real_rows(self, series: str) -> pd.DataFrame:
        """The real band of one series (periods whose real value moves within the band)."""
        if not self.available or self.band.real_band.empty:
            return pd.DataFrame(columns=["period", "real", "real_low", "real_high"])
        rb = self.band.real_band
        return rb[rb["series"] == series].reset_index(drop=True)


def revision_band_for(ws: Workspace, index: str, series: Sequence[Series] = (),
                      base: Any = None, *, current: str | None = None,
                      to: Frequency | None = None, interpolate: Any = False) -> BandView:
    """The revision band of ``index`` (pipeline.revision_risk.revision_band) for the
    screens: banding the vintage ``current`` (default the latest) and, with money
    ``series`` and a ``base``, the real values resting on it. With one vintage there is
    no band and the note says why in plain words."""
    from pipeline.revision_risk import WS310, WS311, revision_band

    vins = ws.indexes.get(index) or {}
    if len(vins) < 2:
        return BandView(index, None, (), (
            f"No revision band: {index} is held in one vintage only, so there is no record "
            "of how its preliminary values were revised. Add earlier releases of the index "
            "(each with its as-of date) on Data intake to measure one."), (), ())
    band = revision_band(vins, list(series), base if series else None, current=current, to=to,
                         fy_start=fy_start(ws), interpolate=interpolation(interpolate))
    note = None
    if not band.available:
        refused = [w for w in band.warnings if w.code in (WS310, WS311)]
        if refused and refused[0].code == WS311:
            note = (f"No revision band: vintage {band.current or 'not stated'} of {index} has "
                    "no preliminary values, so nothing here rests on values still to be "
                    "revised.")
        else:
            note = (f"No revision band: {index} is held in {len(vins):,} vintages, but they "
                    f"record only {band.history.count:,} past revision(s) of preliminary "
                    f"values; a band needs at least {band.min_revisions:,}.")
    elif series and band.real_band.empty:
        note = (f"The real figures shown do not rest on the preliminary values of {index}, "
                "so the revision band does not reach them.")
    shown = tuple(w for w in band.warnings if w.code not in (WS310, WS311))
    return BandView(index, band, band.statements, note, band.method_note(), shown)


def band_width_note(rows: pd.DataFrame, unit: str) -> str | None:
    """How wide the real band is at its widest, in words, so a band too narrow to see at
    the chart's scale is still stated (None when there is no band)."""
    if rows.empty:
        return None
    width = (pd.to_numeric(rows["real_high"]) - pd.to_numeric(rows["real_low"])).abs()
    i = width.idxmax()
    real = abs(float(rows.loc[i, "real"]))
    share = f" ({100 * float(width[i]) / real:,.2f} % of the real value)" if real else ""
    return (f"The band is at most {float(width[i]):,.1f} {unit} wide{share}, in "
            f"{rows.loc[i, 'period']}; where it is thinner than the line, zoom in on the "
            "shaded stretch to see it.")


def quantile_words(quantiles: Sequence[float]) -> str:
    """'10 %–90 % quantiles'."""
    lo, hi = quantiles
    return f"{100 * lo:.0f} %–{100 * hi:.0f} % quantiles"


# --------------------------------------------------------------------------- the address


@dataclass(frozen=True)
class Asked:
    """Choices the page address holds for one screen (``#key?name=value&...``, written by
    the shell's clientside callback, dashboard/assets/shell.js)."""

    values: dict[str, tuple[str, ...]]

    def get(self, name: str, *, multi: bool = False) -> Any:
        """The value named ``name`` (a list of them with ``multi``), or None."""
        found = self.values.get(name)
        if not found:
            return None
        return list(found) if multi else found[0]


def address_choices(hash_: Any, key: str) -> Asked:
    """The choices for screen ``key`` in the address's fragment (``#real?series=Apparel
    revenue&base=2024``): nothing when the fragment names another screen or none. The
    screens use them only where no current choice is on the page (a reload, a shared
    address), and every value still passes the screen's own checks (an option that is not
    offered is not chosen)."""
    from urllib.parse import parse_qs, unquote

    text = str(hash_ or "").lstrip("#")
    screen, _, query = text.partition("?")
    if unquote(screen) != key or not query:
        return Asked({})
    parsed = parse_qs(query, keep_blank_values=False)
    return Asked({k: tuple(v) for k, v in parsed.items()})
