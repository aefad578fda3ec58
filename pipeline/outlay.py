"""Outlay-weighted deflation of budget authority.

Budget authority (an appropriation, a capital program) granted in year t is not all spent
in year t: it is spent over several years at its *outlay rates* r0, r1, ... — the shares
spent in the year of authority and in each following year, adding up to 1. Each year's
outlays are bought at that year's prices, so each is deflated by that year's index
(common practice in public budgeting; DESIGN.md "facts of the trade"):

    real(t)     = sum_k r_k * BA(t) * I(base) / I(t+k)
    implied(t)  = 100 * BA(t) / real(t)          (the implied authority deflator)

``I`` is the deflator rebased so that its average over the base span is 100, taken per
year as the simple average of its sub-periods. The implied authority deflator depends on
the index and the rates only, so it is defined for the base years too;
``deflator_index`` in the results is that deflator **rebased to the base** (average over
the base years = 100). Because authority of the base year is itself partly spent at
later prices, the unrebased implied deflator of the base year is above 100 when prices
rise; the method note states it.

Status: a real value rests on the index of every outlay year it uses (and on the base
years' outlay-year values, through the rebasing), so it takes the worst status of all of
them and of its own nominal amount: authority whose outlays reach a projected index year
is projected.

Rates can be the same for every series or given per series (the others are deflated as
usual, each period by its own index, :func:`pipeline.deflate.deflate`); the result is a
:class:`pipeline.deflate.DeflationResult` (an :class:`AuthorityResult`), so exports, the
audit workbook and the budget table take it unchanged.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .deflate import (
    DF002,
    DF006,
    DF010,
    DeflationResult,
    Interpolate,
    _bridge,
    _indicator_for,
    _needs_bridge,
    deflate,
    interpolation_method,
)
from .errors import Problem, RealbasisError, fail, register, warn
from .indexes import _require_index, rebase
from .model import STATUSES, Frequency, Series
from .periods import (
    PE201,
    Span,
    check_index,
    describe_ranges,
    parse_span,
    relation,
    status_ranks,
    to_frequency,
)

DF020 = register("DF020", "outlay rates do not add up to 1")
DF021 = register("DF021", "outlay rate negative or not a number")
DF022 = register("DF022", "the index does not reach every outlay year")
DF023 = register("DF023", "outlay rates need yearly flows")
DF024 = register("DF024", "outlay rates given for a series that is not there")
DF025 = register("DF025", "implied authority deflator's base rests on values not final")

TOLERANCE = 1e-9
"""How far the rates may add up away from 1 (rounding of typed decimals)."""

SETTING = "outlay_rates"
"""Key of the per-series outlay rates in ``Workspace.settings``: series name -> list of
rates (JSON-safe)."""

_ORDINAL = ("the year of authority", "the next year", "the year after")


@dataclass(frozen=True)
class OutlayRates:
    """Shares of one year's authority spent in that year and the following ones."""

    rates: tuple[float, ...]

    @property
    def years(self) -> int:
        """How many outlay years, counting the year of authority."""
        return len(self.rates)

    @property
    def lags(self) -> tuple[int, ...]:
        """Offsets k of the outlay years with a share above zero."""
        return tuple(k for k, r in enumerate(self.rates) if r > 0)

    def text(self) -> str:
        """'0.5,0.3,0.2' (how it is saved and typed)."""
        return ",".join(f"{r:g}" for r in self.rates)

    def describe(self) -> str:
        """'50 % in the year of authority, 30 % the next year, 20 % the year after'."""
        parts = []
        for k, r in enumerate(self.rates):
            when = _ORDINAL[k] if k < len(_ORDINAL) else f"{k} years after"
            parts.append(f"{100 * r:g} % {'in ' if k == 0 else ''}{when}")
        return ", ".join(parts)


RatesGiven = OutlayRates | str | Sequence[float | str]


def outlay_rates(given: RatesGiven, *, series: str | None = None) -> OutlayRates:
    """Read outlay rates: ``'0.5,0.3,0.2'``, ``'50%, 30%, 20%'`` (or ``;`` / blanks
    between them) or a sequence of numbers. They must be numbers >= 0 (DF021) adding up
    to 1 within :data:`TOLERANCE` (DF020); ``series`` only locates the problem."""
    if isinstance(given, OutlayRates):
        return given
    if isinstance(given, str):
        parts = [p for p in given.replace(";", ",").replace(" ", ",").split(",") if p.strip()]
    else:
        parts = list(given)
    if not parts:
        raise fail(DF021, "no outlay rates given",
                   expected="shares of the authority spent in its year and the following "
                            "ones, e.g. 0.5, 0.3, 0.2", found="(empty)", series=series,
                   fix="Give one share per outlay year, starting with the year of authority.")
    values: list[float] = []
    for k, part in enumerate(parts):
        text = str(part).strip()
        try:
            v = (float(text[:-1]) / 100.0 if text.endswith("%") else float(text))
        except ValueError:
            v = float("nan")
        if not np.isfinite(v) or v < 0:
            raise fail(DF021, f"outlay rate {k + 1} is {'negative' if v < 0 else 'not a number'}",
                       expected="a share >= 0 (0.3 or 30%) for each outlay year",
                       found=repr(text), series=series,
                       fix="Give each share as a fraction or percent of the year's authority; "
                           "none can be negative.")
        values.append(v)
    total = float(np.sum(values))
    if abs(total - 1.0) > TOLERANCE:
        raise fail(DF020, "the outlay rates do not add up to 1",
                   expected="shares adding up to 1 (100 %): all of the authority is spent",
                   found=f"{', '.join(f'{v:g}' for v in values)} add up to {total:.10g}",
                   series=series,
                   fix="Correct the shares so that they add up to exactly 1, e.g. 0.5, 0.3, "
                       "0.2.")
    return OutlayRates(tuple(values))


def rates_by_series(given: Mapping[str, RatesGiven] | None) -> dict[str, OutlayRates]:
    """Per-series rates (as saved in ``settings["outlay_rates"]``) read and checked;
    entries that are empty are left out."""
    out: dict[str, OutlayRates] = {}
    for name, rates in (given or {}).items():
        if rates is None or (isinstance(rates, str | list | tuple) and not len(rates)):
            continue
        out[str(name)] = outlay_rates(rates, series=str(name))
    return out


def with_outlay_rates(ws: object, series: str, rates: RatesGiven | None) -> object:
    """A copy of workspace ``ws`` with ``series``' outlay rates saved in its settings
    (None or empty clears them). DF024 when the workspace has no such series."""
    money = getattr(ws, "series", {})
    if series not in money:
        raise fail(DF024, f"no money series called {series!r}",
                   expected="a money series of the workspace", found=repr(series),
                   series=series, fix="Choose one of the workspace's money series.")
    settings = dict(getattr(ws, "settings", {}) or {})
    saved = dict(settings.get(SETTING) or {})
    if rates is None or (isinstance(rates, str) and not rates.strip()):
        saved.pop(series, None)
    else:
        saved[series] = list(outlay_rates(rates, series=series).rates)
    settings[SETTING] = saved
    return dataclasses.replace(ws, settings=settings)  # type: ignore[type-var]


# --------------------------------------------------------------------------- result


@dataclass(frozen=True, eq=False)
class AuthorityResult(DeflationResult):
    """A deflation result in which some (or all) series are budget authority deflated
    through outlay rates.

    ``rates``: series name -> :class:`OutlayRates` for the series deflated that way
    (other series were deflated as usual). ``implied``: (D, T, S) the implied authority
    deflator 100 x nominal / real before rebasing (NaN for series without rates);
    ``base_level``: (D, S) its average over the base years (1 for series without rates),
    so that ``index_used = 100 x implied / base_level``.
    """

    rates: Mapping[str, OutlayRates] = field(default_factory=dict)
    implied: np.ndarray | None = None
    base_level: np.ndarray | None = None


def _year_frequency(series: Sequence[Series], to: Frequency | None) -> Frequency:
    if to is not None:
        if to.code not in ("A", "FY"):
            raise fail(DF023, f"outlay rates are shares per year, but the results are asked "
                       f"{to.describe()}", expected="results by calendar or fiscal year",
                       found=to.describe(), series=series[0].name if series else None,
                       fix="Show authority deflated through outlay rates by year.",
                       remedy="result_frequency")
        return to
    freqs = {s.frequency for s in series}
    if len(freqs) > 1:
        raise fail(DF002, "the series have different frequencies",
                   expected="one frequency, or a common yearly frequency for the results",
                   found=", ".join(sorted(f.describe() for f in freqs)),
                   fix="Say which frequency the results should have.",
                   remedy="result_frequency")
    (freq,) = freqs
    if freq.code not in ("A", "FY"):
        raise fail(DF023, f"outlay rates are shares per year, but {series[0].name!r} is "
                   f"{freq.describe()}", expected="authority by calendar or fiscal year",
                   found=freq.describe(), series=series[0].name,
                   fix="Show the results by calendar or fiscal year (the amounts are then "
                       "summed by year first).", remedy="result_frequency")
    return freq


@dataclass(frozen=True)
class _YearIndex:
    """One deflator rebased (base = 100) and taken per year."""

    series: Series  # rebased at its own (or bridged monthly) frequency, for 'Indexes used'
    values: pd.Series  # per year, base = 100
    ranks: pd.Series  # per year, int status rank
    interpolated: bool
    words: str
    warnings: tuple[Problem, ...]


def _year_index(d: Series, span: Span, year: Frequency, interpolate: Interpolate,
                indicator: Series | None = None) -> _YearIndex:
    _require_index(d)
    check_index(d)
    words = ""
    warnings: tuple[Problem, ...] = ()
    interpolated = False
    method = interpolation_method(interpolate)
    if d.frequency.code != "M" and _needs_bridge(d, span, [year]):
        if not method:
            if relation(d.frequency, year) is None:
                raise fail(PE201, f"{d.name!r} ({d.frequency.describe()}) cannot be taken "
                           f"to {year.describe()}: the periods do not nest",
                           expected="deflator periods that fit into the outlay years",
                           found=f"{d.frequency.describe()} and {year.describe()}",
                           column=d.name,
                           fix="Use a deflator whose periods align with the years, or allow "
                           "interpolating it to months (every value resting on an "
                           "interpolated one is then flagged).", remedy="interpolate")
        else:
            d, _flags, bridge_words, warnings = _bridge(d, method, indicator)
            interpolated = True
            words = bridge_words + "; "
    rebased = rebase(d, span)
    rel = relation(rebased.frequency, year)
    if rel not in ("same", "coarser"):
        raise fail(PE201, f"{d.name!r} ({d.frequency.describe()}) is less frequent than the "
                   f"outlay years ({year.describe()})",
                   expected="a deflator at least as frequent as the years",
                   found=d.frequency.describe(), column=d.name,
                   fix="Use a yearly or more frequent deflator.", remedy="interpolate")
    conv = to_frequency(rebased, year)
    yearly = conv.series
    ranks = pd.Series(status_ranks(yearly), index=yearly.index)
    words += (f"{d.name!r} ({d.frequency.describe()}) rebased to {span.label} = 100 and "
              f"taken per year as the simple average of its sub-periods")
    return _YearIndex(rebased, yearly.values, ranks, interpolated, words, warnings)


def _authority(series: Sequence[Series], deflators: Sequence[Series], span: Span,
               year: Frequency, rates: Mapping[str, OutlayRates], interpolate: Interpolate,
               indicators: Mapping[str, Series] | Series | None = None) -> AuthorityResult:
    problems: list[Problem] = []
    warnings: list[Problem] = []
    nominal_years: list[pd.Series] = []
    nominal_ranks: list[pd.Series] = []
    for s in series:
        check_index(s)
        if s.kind != "flow":
            raise fail(DF023, f"{s.name!r} is a {s.kind}; outlay rates spread flows of "
                       "authority over years", expected="a flow (authority granted in a "
                       "year)", found=s.kind, series=s.name,
                       fix="Give outlay rates only for authority or spending series.",
                       remedy="series_kind")
        conv = to_frequency(s, year) if s.frequency != year else None
        got = conv.series if conv is not None else s
        if conv is not None:
            warnings.extend(conv.warnings)
        nominal_years.append(got.values)
        nominal_ranks.append(pd.Series(status_ranks(got), index=got.index))
    starts = [v.dropna().index.min() for v in nominal_years if v.notna().any()]
    ends = [v.dropna().index.max() for v in nominal_years if v.notna().any()]
    if not starts:
        raise fail(DF023, "no amounts to deflate", expected="authority in at least one year",
                   found="no values", fix="Give the authority amounts.")
    periods = pd.period_range(min(starts), max(ends), freq=year.pandas_freq)
    n_t, n_s, n_d = len(periods), len(series), len(deflators)
    nominal = np.column_stack([v.reindex(periods).to_numpy(dtype=float)
                               for v in nominal_years])
    n_rank = np.column_stack([r.reindex(periods).fillna(0).to_numpy(dtype=np.int8)
                              for r in nominal_ranks])
    base_years = span.periods_in(year)
    real = np.full((n_d, n_t, n_s), np.nan)
    implied = np.full((n_d, n_t, n_s), np.nan)
    index_used = np.full((n_d, n_t, n_s), np.nan)
    status = np.zeros((n_d, n_t, n_s), dtype=np.int8)
    interp = np.zeros((n_d, n_t, n_s), dtype=bool)
    base_level = np.ones((n_d, n_s))
    used: list[Series] = []
    words: list[str] = []
    lab = year.label
    for k, d in enumerate(deflators):
        try:
            yi = _year_index(d, span, year, interpolate, _indicator_for(d.name, indicators))
        except RealbasisError as err:
            problems.extend(err.problems)
            continue
        used.append(yi.series)
        gaps: dict[tuple[tuple[pd.Period, ...], tuple[pd.Period, ...], str, str],
                   list[str]] = {}
        base_note: dict[str, list[str]] = {}
        warnings.extend(w for w in yi.warnings if w not in warnings)
        words.append(yi.words)
        for j, s in enumerate(series):
            r = rates[s.name]
            present = ~np.isnan(nominal[:, j])
            years_needed = periods[present]
            # every outlay year of every authority year shown, and of the base years
            need = {(p + lag) for p in (*years_needed, *base_years) for lag in r.lags}
            have = yi.values.dropna().index
            missing = sorted(p for p in need if p not in have)
            if missing:
                who = sorted({p for p in (*years_needed, *base_years)
                              if any((p + lag) in missing for lag in r.lags)})
                gaps.setdefault((tuple(missing), tuple(who), lab(min(need)), lab(max(need))),
                                []).append(s.name)
                continue

            def factor(p: pd.Period, r: OutlayRates = r, yi: _YearIndex = yi) -> float:
                return float(sum(r.rates[lag] * 100.0 / yi.values[p + lag] for lag in r.lags))

            def rank(p: pd.Period, r: OutlayRates = r, yi: _YearIndex = yi) -> int:
                return int(max(yi.ranks[p + lag] for lag in r.lags))

            base_f = np.array([factor(b) for b in base_years])
            base_level[k, j] = float(np.mean(100.0 / base_f))
            base_rank = max(rank(b) for b in base_years)
            if base_rank > 0:
                base_note.setdefault(STATUSES[base_rank], []).append(s.name)
            for t in np.flatnonzero(present):
                p = periods[t]
                f = factor(p)
                real[k, t, j] = nominal[t, j] * f
                implied[k, t, j] = 100.0 / f
                index_used[k, t, j] = 100.0 * (100.0 / f) / base_level[k, j]
                status[k, t, j] = max(int(n_rank[t, j]), rank(p))
                interp[k, t, j] = yi.interpolated
        for (missing, who, first, last), names in gaps.items():
            years = describe_ranges([lab(p) for p in missing])
            problems.append(Problem(
                DF022, f"{d.name!r} does not reach every outlay year of "
                f"{', '.join(repr(n) for n in names)}",
                expected=f"index values for every year in which the authority is spent "
                         f"({first} to {last})",
                found=f"no value for {years}, needed by the authority of "
                      f"{describe_ranges([lab(p) for p in who])}",
                fix=f"Extend {d.name!r} over {years} (a projection at an assumed rate), or "
                    "leave out the authority years whose outlays it does not reach.",
                where=_loc(names[0], d.name, lab(missing[0])), remedy="project_index"))
        for st, names in base_note.items():
            warnings.append(warn(
                DF025, f"the base level of the implied authority deflator under {d.name!r} "
                f"rests on {st} index values", expected="final index values in the years the "
                "base years' authority is spent",
                found=f"{st} values among the outlay years of {span.label} "
                      f"({', '.join(repr(n) for n in names)})", column=d.name,
                fix="The real values do not depend on it; the rebased implied deflator "
                    "moves when those index values are revised."))
        worst = status[k][~np.isnan(nominal)] if n_s else status[k][:0]
        if worst.size and worst.max() > 0:
            warnings.append(warn(
                DF010, f"real authority under {d.name!r} rests on "
                f"{STATUSES[int(worst.max())]} index or amount values",
                expected="final values", found=f"{int((worst > 0).sum())} value(s) not final "
                f"({year.describe()})", column=d.name,
                fix="Show these figures as provisional; they will move when the index is "
                    "revised or the amounts are enacted."))
    if problems:
        raise RealbasisError(problems)
    method = [
        "Budget authority deflated through its outlay rates (common practice in public "
        "budgeting): authority of year t is spent over year t and the following years at "
        "the outlay rates r0, r1, ...; real(t) = sum_k r_k x BA(t) x I(base) / I(t+k), "
        "each outlay year's share deflated by that year's index.",
        *(f"Outlay rates of {', '.join(repr(n) for n in group)}: {r.describe()}."
          for r, group in _groups(series, rates).items()),
        f"deflator_index is the implied authority deflator 100 x nominal / real, rebased so "
        f"that its average over {span.describe()} = 100; authority of the base years is "
        "itself partly spent in later years, so before rebasing it is "
        + "; ".join(f"{level:.3f} under {dname!r} for {', '.join(repr(n) for n in group)}"
                    for (dname, level), group in _levels(series, deflators, base_level,
                                                         rates).items()) + ".",
        *(f"Deflator {w}." for w in words),
        "Status: each real value carries the worst status (projected > preliminary > final) "
        "of its amount and of the index in every outlay year it uses (the index being "
        "rebased, that includes its base-period values). The rebased implied deflator also "
        "rests on the index in the outlay years of the base years' authority.",
    ]
    return AuthorityResult(
        base=span, frequency=year, periods=periods,
        series_names=tuple(s.name for s in series),
        deflator_names=tuple(d.name for d in deflators),
        kinds=tuple("flow" for _ in series), units=tuple(s.unit for s in series),
        nominal=nominal, real=real, index_used=index_used, status=status,
        interpolated=interp if interp.any() else None, method=tuple(method),
        warnings=tuple(warnings), deflators_used=tuple(used),
        rates={s.name: rates[s.name] for s in series}, implied=implied,
        base_level=base_level,
    )


def _groups(series: Sequence[Series], rates: Mapping[str, OutlayRates]
            ) -> dict[OutlayRates, list[str]]:
    out: dict[OutlayRates, list[str]] = {}
    for s in series:
        out.setdefault(rates[s.name], []).append(s.name)
    return out


def _levels(series: Sequence[Series], deflators: Sequence[Series], level: np.ndarray,
            rates: Mapping[str, OutlayRates]) -> dict[tuple[str, float], list[str]]:
    out: dict[tuple[str, float], list[str]] = {}
    for k, d in enumerate(deflators):
        for j, s in enumerate(series):
            out.setdefault((d.name, round(float(level[k, j]), 9)), []).append(s.name)
    return out


def _loc(series: str, column: str, period: str) -> object:
    from .errors import Location

    return Location(series=series, column=column, period=period)


def _merge(a: AuthorityResult, b: DeflationResult) -> AuthorityResult:
    """Series of ``b`` (deflated as usual) next to those of ``a`` (through outlay rates):
    same base, frequency and deflators."""
    periods = a.periods.union(b.periods)
    ra = periods.get_indexer(a.periods)
    rb = periods.get_indexer(b.periods)
    n_t, n_d = len(periods), len(a.deflator_names)
    sa, sb = len(a.series_names), len(b.series_names)

    def put(x: np.ndarray, y: np.ndarray, fill: object, dtype: object = float) -> np.ndarray:
        out = np.full((n_d, n_t, sa + sb), fill, dtype=dtype)  # type: ignore[call-overload]
        out[:, ra, :sa] = x
        out[:, rb, sa:] = y
        return out

    nominal = np.full((n_t, sa + sb), np.nan)
    nominal[ra, :sa] = a.nominal
    nominal[rb, sa:] = b.nominal
    ia = a.interpolated if a.interpolated is not None else np.zeros(a.real.shape, bool)
    ib = b.interpolated if b.interpolated is not None else np.zeros(b.real.shape, bool)
    interp = put(ia, ib, False, bool)
    assert a.implied is not None and a.base_level is not None
    method = list(a.method)
    for m in b.method:
        if m not in method:
            method.append(m)
    method.append("Series without outlay rates are deflated as usual, each period by its "
                  "own index: " + ", ".join(repr(n) for n in b.series_names) + ".")
    return AuthorityResult(
        base=a.base, frequency=a.frequency, periods=periods,
        series_names=(*a.series_names, *b.series_names), deflator_names=a.deflator_names,
        kinds=(*a.kinds, *b.kinds), units=(*a.units, *b.units), nominal=nominal,
        real=put(a.real, b.real, np.nan), index_used=put(a.index_used, b.index_used, np.nan),
        status=put(a.status, b.status, 0, np.int8),
        interpolated=interp if interp.any() else None, method=tuple(method),
        warnings=(*a.warnings, *(w for w in b.warnings if w not in a.warnings)),
        deflators_used=a.deflators_used, rates=a.rates,
        implied=put(a.implied, np.full(b.real.shape, np.nan), np.nan),
        base_level=np.concatenate([a.base_level, np.ones((n_d, sb))], axis=1),
    )


def deflate_authority(series: Sequence[Series], deflators: Sequence[Series],
                      base: str | Span | pd.Period,
                      rates: RatesGiven | Mapping[str, RatesGiven], *,
                      to: Frequency | None = None, fy_start: int | None = None,
                      interpolate: Interpolate = False,
                      indicators: Mapping[str, Series] | Series | None = None
                      ) -> AuthorityResult:
    """Deflate budget authority through outlay rates into constant dollars of ``base``.

    ``rates``: one set for every series (``'0.5,0.3,0.2'``, a sequence, or
    :class:`OutlayRates`), or a mapping series name -> rates for some series only (the
    others are deflated as usual by :func:`pipeline.deflate.deflate`). Results are by
    year: ``to`` (calendar or fiscal years), else the series' own yearly frequency;
    monthly or quarterly authority is summed by year first. ``fy_start`` reads fiscal
    labels in ``base`` (else the fiscal start of ``to`` or of the series);
    ``interpolate`` lets a deflator whose periods do not fit the years (calendar years
    for July fiscal years) serve through monthly interpolation, flagged (True or
    "denton": proportional Denton, "linear": straight lines; ``indicators`` guide Denton as
    in :func:`pipeline.deflate.deflate`).

    Errors: DF020 rates not adding up to 1, DF021 negative rates, DF022 outlay years
    (or base years' outlay years) the index does not reach, naming them (remedy: project
    the index), DF023 not yearly flows, DF024 rates for an unknown series.
    """
    if not series:
        raise fail(DF006, "no series to deflate", expected="one or more money series",
                   found="none", fix="Give the authority series to deflate.")
    if not deflators:
        raise fail(DF006, "no deflator given", expected="at least one price index",
                   found="none", fix="Give one or more price indexes.",
                   remedy="deflator_missing")
    names = [s.name for s in series]
    if isinstance(rates, Mapping):
        per = rates_by_series(rates)
        unknown = [n for n in per if n not in names]
        if unknown:
            raise fail(DF024, f"outlay rates are given for {', '.join(map(repr, unknown))}, "
                       "which is not among the series", expected="rates for series that "
                       "are deflated", found=", ".join(unknown), series=unknown[0],
                       fix="Remove those rates or add the series.")
    else:
        one = outlay_rates(rates)
        per = {n: one for n in names}
    year = _year_frequency(series, to)
    fy = fy_start if fy_start is not None else (year.fy_start if year.code == "FY" else None)
    span = parse_span(base, fy if fy is not None else year)
    with_rates = [s for s in series if s.name in per]
    plain = [s for s in series if s.name not in per]
    if not with_rates:
        res = deflate(plain, deflators, span, to=year, fy_start=fy, interpolate=interpolate,
                      indicators=indicators)
        return AuthorityResult(**{f.name: getattr(res, f.name)
                                  for f in dataclasses.fields(DeflationResult)},
                               implied=np.full(res.real.shape, np.nan),
                               base_level=np.ones((len(deflators), len(plain))))
    out = _authority(with_rates, deflators, span, year, per, interpolate, indicators)
    if plain:
        out = _merge(out, deflate(plain, deflators, span, to=year, fy_start=fy,
                                  interpolate=interpolate, indicators=indicators))
    return out


# --------------------------------------------------------------------------- what the index reaches


def last_whole_year(index: Series, years: Frequency) -> pd.Period | None:
    """The last year (of ``years``) whose every month ``index`` has a value in: the year
    containing its last value, or the one before when that year is not complete."""
    v = index.values.dropna()
    if v.empty:
        return None
    end_month = v.index[-1].asfreq("M", how="end")
    year = end_month.asfreq(years.pandas_freq)
    if year.asfreq("M", how="end") != end_month:
        year -= 1
    return year


def reach_until(series: Series, rates: OutlayRates, years: Frequency) -> str | None:
    """The year an index must reach for the outlays of every year of ``series``'
    authority: its last year plus the longest outlay lag (for the proposal 'project the
    index until …')."""
    v = series.values.dropna()
    if v.empty:
        return None
    last = v.index[-1].asfreq(years.pandas_freq, how="end")
    return years.label(last + (rates.years - 1))


def cut_to_reach(series: Series, deflators: Sequence[Series], rates: OutlayRates,
                 years: Frequency) -> tuple[Series, str | None]:
    """Leave out the years of authority whose outlays reach beyond the last whole year
    every deflator covers (authority of year t is spent until t + the longest lag), so
    the others can be shown; returns the series and a note (None when nothing was cut,
    or when nothing would be left: then :func:`deflate_authority` says what is missing,
    DF022). Only the end is cut: outlays run forward in time."""
    lasts = [y for y in (last_whole_year(d, years) for d in deflators) if y is not None]
    v = series.values.dropna()
    if not lasts or v.empty:
        return series, None
    last = min(lasts)
    lag = rates.years - 1
    year_of = v.index.asfreq(years.pandas_freq, how="end")
    keep = np.asarray((year_of + lag) <= last)
    if keep.all() or not keep.any():
        return series, None
    kept_end = v.index[keep][-1]
    kept = series.values.loc[:kept_end]
    status = series.status.reindex(kept.index) if series.status is not None else None
    f = series.frequency
    return series.with_values(kept, status=status), (
        f"{series.name} is shown to {f.label(kept_end)}: the authority of later years is "
        f"spent until {years.label(year_of[-1] + lag)} at its outlay rates, beyond the last "
        f"year the deflator covers ({years.label(last)}).")
