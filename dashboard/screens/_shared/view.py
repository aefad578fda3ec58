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
* **frequency**: :func:`frequency_options`, :func:`parse_frequency` (``auto``, ``native``,
  ``Q``, ``A``, ``FY-<month>``);
* **base period**: :func:`default_base`, :func:`base_fits`, :func:`base_after_series_change`,
  :func:`base_for`, :func:`shown_base`;
* **several deflators**: :func:`trim_to_cover` (the span every deflator covers) and
  :func:`spread` (one series under several deflators, growth per deflator and the verdict;
  used by Deflator spread and by the share screen's chart image);
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
from pipeline.model import Frequency, Series, Workspace

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


def deflator_options(ws: Workspace) -> list[dict[str, str]]:
    out = []
    for name, vins in ws.indexes.items():
        s = vins[latest_vintage(vins)]
        vin = latest_vintage(vins) or "vintage not stated"
        out.append({"label": f"{name} ({s.frequency.describe()}, {vin})", "value": name})
    return out


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
    return Series(name=f"Total of {len(parts)} series", values=total.astype(float),
                  frequency=first.frequency, kind=first.kind, unit=first.unit, status=status,
                  notes=(f"sum of: {', '.join(names)}",))


# --------------------------------------------------------------------------- result frequency


def frequency_options(ws: Workspace, series: Series | None) -> list[dict[str, str]]:
    """Frequencies a result can be shown at: the series' own and the coarser ones."""
    opts = [{"label": "Automatic (the series' own; the deflator's if less frequent)",
             "value": "auto"}, {"label": "As the series", "value": "native"}]
    if series is None:
        return opts
    ppy = series.frequency.periods_per_year
    fy_starts = sorted({s.frequency.fy_start for s in ws.series.values() if s.frequency.is_fiscal})
    if ppy > 4:
        opts.append({"label": "Quarters", "value": "Q"})
    if ppy > 1:
        opts.append({"label": "Calendar years", "value": "A"})
        for m in fy_starts or []:
            opts.append({"label": f"Fiscal years starting {calendar.month_name[m]}",
                         "value": f"FY-{m}"})
    return opts


def parse_frequency(code: str | None, series: Series | None = None,
                    deflators: Sequence[Series] = ()) -> Frequency | None:
    """The result frequency chosen on screen. ``auto``: the series' own, or the least
    frequent deflator's when that is coarser (the engine refuses to deflate a series by a
    less frequent index without interpolation)."""
    if code == "auto":
        if series is None or not deflators:
            return None
        coarsest = min(deflators, key=lambda d: d.frequency.periods_per_year).frequency
        if coarsest.periods_per_year < series.frequency.periods_per_year:
            if coarsest.code == "Q" and series.frequency.is_fiscal:
                return Frequency("Q", series.frequency.fy_start)
            if coarsest.code == "A" and series.frequency.is_fiscal:
                return Frequency("FY", series.frequency.fy_start)
            return coarsest
        return None
    if not code or code == "native":
        return None
    if code.startswith("FY-"):
        return Frequency("FY", int(code[3:]))
    return Frequency(code)  # type: ignore[arg-type]


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


def base_fits(series: Series, base: str | None) -> bool:
    """Whether ``base`` is made of whole periods of the series (pipeline.periods)."""
    from pipeline.periods import parse_span

    if not (base or "").strip():
        return True
    try:
        parse_span(base.strip(), series.frequency).periods_in(series.frequency)
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
    return None if base_fits(s, base) else default_base(s)


def shown_base(ws: Workspace, current: str | None) -> str:
    """The base field's value when a workspace opens: the one typed, else the saved one."""
    return current if current else str(ws.settings.get("base") or "")


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


# --------------------------------------------------------------------------- several deflators


def trim_to_cover(s: Series, deflators: Sequence[Series]) -> tuple[Series, str | None]:
    """Cut the series to the periods every deflator covers (first to last value), so
    deflators of different lengths can be compared. Only the ends are cut; a gap inside
    a deflator is still refused by the engine. Returns the series and a note (or None)."""
    values = s.values.dropna()
    if values.empty or not deflators:
        return s, None
    start = max(d.values.dropna().index[0].start_time for d in deflators if d.values.notna().any())
    end = min(d.values.dropna().index[-1].end_time for d in deflators if d.values.notna().any())
    idx = s.values.index
    keep = (idx.start_time >= start) & (idx.end_time <= end)
    if keep.all():
        return s, None
    kept = s.values[keep]
    if kept.dropna().empty:
        raise fail(UI005, f"the chosen deflators do not cover any period of {s.name!r}",
                   expected=f"index values from {s.frequency.label(idx[0])} to "
                            f"{s.frequency.label(idx[-1])}",
                   found=f"deflators covering {start:%Y-%m} to {end:%Y-%m}",
                   fix="Choose deflators that cover the series, or project the index on the "
                       "deflator shelf.")
    status = s.status.reindex(kept.index) if s.status is not None else None
    out = s.with_values(kept, status=status)
    first, last = kept.dropna().index[0], kept.dropna().index[-1]
    note = (f"{s.name} is shown from {s.frequency.label(first)} to {s.frequency.label(last)}, "
            "the periods every chosen deflator covers.")
    return out, note


MEASURES = {
    "yoy": "latest period on a year earlier",
    "cagr": "compound annual rate over the whole span",
    "pop": "latest period on the one before",
}


@dataclass(frozen=True)
class Spread:
    table: pd.DataFrame                 # the engine's tidy table (one series, many deflators)
    rows: list[dict[str, Any]]          # per deflator: nominal, price and real growth
    verdict: str
    verdict_tone: str
    title: str
    unit: str
    measure_words: str
    method: tuple[str, ...]
    warnings: tuple[Problem, ...]


def spread(ws: Workspace, series_key: str, deflators: Sequence[str], base: str | None, *,
           to: str | None = "auto", measure: str = "yoy") -> Spread:
    """One series under every chosen deflator, with growth per deflator and a verdict."""
    from pipeline import growth
    from pipeline.deflate import deflate

    if not deflators:
        raise fail(UI005, "no deflator chosen", expected="one or more price indexes",
                   found="none", fix="Tick the deflators to compare.")
    s = pick_series(ws, series_key)
    ds = [pick_index(ws, name) for name in deflators]
    s, cut = trim_to_cover(s, ds)
    res = deflate([s], ds, base_for(s, base), to=parse_frequency(to, s, ds))
    table = res.table()
    f = res.frequency
    nominal = res.nominal_series(s.name)
    rows = []
    for name in res.deflator_names:
        real = res.real_series(s.name, name)
        price = 100.0 * nominal / real
        rates = {}
        for key, v in (("nominal", nominal), ("price", price), ("real", real)):
            rates[key] = _measure(growth, v, f, measure)
        worst = table.loc[table["deflator"] == name, "status"]
        rows.append({"deflator": name, **rates, "status": _worst(worst)})
    span = _measure_span(nominal, f, measure)
    verdict, tone = verdict_text([r["real"] for r in rows], MEASURES.get(measure, measure), span)
    title = f"{s.name} in {res.dollars_label} under {len(rows):,} deflator(s) ({s.unit or 'unit not stated'})"
    return Spread(table, rows, verdict, tone, title, s.unit or "unit not stated",
                  f"{MEASURES.get(measure, measure)} ({span})",
                  (*res.method_note(), *([cut] if cut else [])), res.warnings)


def _measure_span(nominal: pd.Series, f: Frequency, measure: str) -> str:
    idx = nominal.dropna().index
    if len(idx) < 2:
        return ""
    last = idx[-1]
    if measure == "cagr":
        return f"{f.label(idx[0])} to {f.label(last)}"
    if measure == "yoy" and f.periods_per_year > 1:
        return f"{f.label(last)} on {f.label(last - f.periods_per_year)}"
    return f"{f.label(last)} on {f.label(last - 1)}"


def _measure(growth: Any, v: pd.Series, f: Frequency, measure: str) -> float:
    v = v.dropna()
    if len(v) < 2:
        return float("nan")
    last = v.index[-1]
    if measure == "cagr":
        return float(growth.cagr(v, v.index[0], last, f).value)
    if measure == "yoy" and f.periods_per_year > 1:
        g = growth.year_on_year(v, f)
    else:
        g = growth.period_on_period(v, f)
    return float(g.values.get(last, float("nan")))


def _worst(statuses: pd.Series) -> str:
    from pipeline.model import STATUS_RANK

    if statuses.empty:
        return "final"
    return max(statuses, key=lambda s: STATUS_RANK.get(s, 0))


def verdict_text(real_rates: Sequence[float], measure_words: str = "", span: str = ""
                 ) -> tuple[str, str]:
    """The plain verdict on the sign of real growth across deflators."""
    usable = [r for r in real_rates if isfinite(r)]
    n = len(usable)
    what = f" ({measure_words}, {span})" if measure_words and span else ""
    if n == 0:
        return "Real growth cannot be computed for the chosen periods.", "warn"
    word = "deflator" if n == 1 else "deflators"
    pos = sum(1 for r in usable if r > 0)
    neg = sum(1 for r in usable if r < 0)
    if pos == n:
        return (f"Real growth is positive under all {n:,} {word}{what}."
                if n > 1 else f"Real growth is positive under the one deflator chosen{what}.",
                "ok")
    if neg == n:
        return (f"Real growth is negative under all {n:,} {word}{what}."
                if n > 1 else f"Real growth is negative under the one deflator chosen{what}.",
                "warn")
    if pos + neg == 0:
        return f"Real growth is zero under all {n:,} {word}{what}.", "info"
    return (f"The sign depends on the deflator: real growth is positive under {pos:,} and "
            f"negative under {neg:,} of {n:,} {word}{what}.", "error")


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
                      base: str | None = None, *, current: str | None = None,
                      to: Frequency | None = None) -> BandView:
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
    band = revision_band(vins, list(series), base if series else None, current=current, to=to)
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
