"""Deflation: nominal money series into constant dollars of a base period.

    real(t) = nominal(t) * I(base) / I(t)

with each deflator first rebased so that its mean over the base span is 100 (so
``deflator_index`` in the results reads "base = 100") and therefore
real(t) = nominal(t) * 100 / I'(t).

Alignment rules (IMF Quarterly National Accounts Manual 2017, ch. 8, and DESIGN.md):

* Deflate at the highest frequency the series and the deflator share, then aggregate to
  the requested ``to`` frequency: flows by summing, stocks by taking the period's last
  value. An annual real flow is thus the sum of its monthly real values, and the implicit
  deflator of the aggregate is 100 * nominal / real (that is what ``deflator_index`` holds
  for aggregated periods), not the mean of the index.
* A deflator more frequent than the series is averaged to the series' periods (flows), or
  taken at the last sub-period (stocks: "point-in-time amounts use the index of that
  month").
* A series more frequent than its deflator is refused (PE204) unless ``to`` asks for the
  deflator's frequency or longer (then the series is first aggregated to the deflator's
  periods), or ``interpolate`` is allowed (the deflator is interpolated -- by proportional
  Denton, keeping each published period's average, unless ``interpolate="linear"`` -- and
  every real value resting on an interpolated index value is flagged:
  :attr:`DeflationResult.interpolated`, ``table(flags=True)``).
* Index periods the series needs but the deflator lacks are an error listing them (DF001).

Status: every real value takes the worst status (projected > preliminary > final) of the
index values it rests on, *including the base-period values*.

The core works on wide 2-D arrays (rows = periods, columns = series) so thousands of
series deflate in one vectorised pass; the tidy table is built only when asked for.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
import pandas as pd

from .errors import Location, Problem, RealbasisError, fail, register, warn
from .indexes import _require_index, base_means
from .model import MONTHLY, STATUSES, Frequency, Kind, Series
from .periods import (
    PE201,
    PE204,
    PE210,
    RULE_WORDS,
    Rule,
    Span,
    aggregate_wide,
    check_index,
    describe_ranges,
    full_range,
    interpolate_index,
    parse_span,
    relation,
    status_ranks,
    worst_status_wide,
)

DF001 = register("DF001", "deflator lacks periods the series needs")
DF002 = register("DF002", "series of different frequencies need a common 'to' frequency")
DF003 = register("DF003", "an index cannot be deflated")
DF004 = register("DF004", "requested frequency is shorter than the data")
DF005 = register("DF005", "duplicate series or deflator names")
DF006 = register("DF006", "nothing to deflate")
DF007 = register("DF007", "deflator value not positive")
DF010 = register("DF010", "real values rest on preliminary or projected index values")
DF011 = register("DF011", "nominal values missing inside a series")

Interpolate = bool | str
"""How a less frequent deflator may be interpolated: False (refused, PE204), True or
"denton" (proportional Denton, keeping each period's average), "linear" (straight lines
between mid-period values)."""


def interpolation_method(interpolate: Interpolate | None) -> str | None:
    """None when interpolation is not allowed, else the method name ('denton', 'linear')."""
    if interpolate is None or interpolate is False or interpolate == "":
        return None
    if interpolate is True:
        from .benchmark import DEFAULT_METHOD

        return DEFAULT_METHOD
    from .benchmark import check_method

    return check_method(interpolate)

TABLE_COLUMNS: tuple[str, ...] = (
    "series", "deflator", "period", "nominal", "deflator_index", "real", "status",
)
_STATUS_ARR = np.array(STATUSES, dtype=object)
CATEGORICAL_ROWS = 1_000_000


@dataclass(frozen=True, eq=False)
class DeflationResult:
    """Many series deflated by many deflators, held as wide arrays.

    Axes: ``periods`` (T, at ``frequency``), ``series_names`` (S), ``deflator_names`` (D).
    ``nominal`` (T, S); ``real``, ``index_used`` (D, T, S) with ``index_used`` the
    deflator level (base = 100) each real value was divided by, or for aggregated periods
    the implicit deflator 100 * nominal / real; ``status`` (D, T, S) int8 ranks
    (0 final, 1 preliminary, 2 projected); ``interpolated`` (D, T, S) bool or None.
    Arrays may be read-only broadcast views: copy before writing.
    """

    base: Span
    frequency: Frequency
    periods: pd.PeriodIndex
    series_names: tuple[str, ...]
    deflator_names: tuple[str, ...]
    kinds: tuple[str, ...]
    units: tuple[str | None, ...]
    nominal: np.ndarray
    real: np.ndarray
    index_used: np.ndarray
    status: np.ndarray
    interpolated: np.ndarray | None
    method: tuple[str, ...]
    warnings: tuple[Problem, ...] = ()
    deflators_used: tuple[Series, ...] = field(default=())

    # -- labels and words ------------------------------------------------------------
    @property
    def base_label(self) -> str:
        """e.g. 'FY2025', '2024Q1', '2024-01..2024-12'."""
        return self.base.label

    @property
    def dollars_label(self) -> str:
        """'constant FY2025 dollars' (for titles)."""
        return f"constant {self.base_label} dollars"

    def method_note(self) -> tuple[str, ...]:
        """What was done, in words, one sentence per item."""
        return self.method

    @cached_property
    def period_labels(self) -> np.ndarray:
        return np.array(self.frequency.labels(self.periods), dtype=object)

    @property
    def has_interpolation(self) -> bool:
        return self.interpolated is not None and bool(np.any(self.interpolated))

    @property
    def worst_status(self) -> str:
        return str(_STATUS_ARR[int(self.status.max())]) if self.status.size else "final"

    # -- wide accessors --------------------------------------------------------------
    def _d(self, deflator: str | int) -> int:
        if isinstance(deflator, int):
            return deflator
        return self.deflator_names.index(deflator)

    def nominal_frame(self) -> pd.DataFrame:
        return pd.DataFrame(self.nominal, index=self.periods, columns=list(self.series_names))

    def real_frame(self, deflator: str | int = 0) -> pd.DataFrame:
        return pd.DataFrame(self.real[self._d(deflator)], index=self.periods,
                            columns=list(self.series_names))

    def index_frame(self, deflator: str | int = 0) -> pd.DataFrame:
        return pd.DataFrame(self.index_used[self._d(deflator)], index=self.periods,
                            columns=list(self.series_names))

    def status_frame(self, deflator: str | int = 0) -> pd.DataFrame:
        ranks = np.asarray(self.status[self._d(deflator)], dtype=np.intp)
        return pd.DataFrame(_STATUS_ARR[ranks], index=self.periods,
                            columns=list(self.series_names))

    def real_series(self, series: str, deflator: str | int = 0) -> pd.Series:
        """One real series (NaN rows dropped) on its PeriodIndex."""
        j = self.series_names.index(series)
        s = pd.Series(self.real[self._d(deflator)][:, j], index=self.periods, name=series)
        return s[~np.isnan(self.nominal[:, j])]

    def nominal_series(self, series: str) -> pd.Series:
        j = self.series_names.index(series)
        s = pd.Series(self.nominal[:, j], index=self.periods, name=series)
        return s.dropna()

    # -- tidy table ------------------------------------------------------------------
    def table(self, *, flags: bool = False, categorical: bool | None = None) -> pd.DataFrame:
        """Tidy table: EXACTLY ``series, deflator, period, nominal, deflator_index, real,
        status`` (periods as canonical labels: 2024-01, 2024Q1, 2024, FY2025), one row per
        series x deflator x period from the series' first nominal value to its last,
        ordered that way; a period missing inside that span has its row with empty
        ``nominal`` and ``real`` (a DF011 or PE210 warning names it). ``flags=True``
        adds a boolean ``interpolated`` column.

        The four text columns are plain strings; tables of more than
        :data:`CATEGORICAL_ROWS` rows use pandas categoricals for them instead (same values,
        built in a fraction of the time and memory). ``categorical`` forces either."""
        d_n, t_n, s_n = len(self.deflator_names), len(self.periods), len(self.series_names)
        # a row for every period from each series' first nominal value to its last; a
        # period missing inside (DF011, PE210) keeps its row with empty numbers
        present = within_span(~np.isnan(self.nominal))  # (T, S)

        def flat(a: np.ndarray) -> np.ndarray:  # (D, T, S) -> order series, deflator, period
            return np.asarray(a).transpose(2, 0, 1).reshape(-1)

        s_i = np.repeat(np.arange(s_n), d_n * t_n)
        d_i = np.tile(np.repeat(np.arange(d_n), t_n), s_n)
        t_i = np.tile(np.arange(t_n), s_n * d_n)
        cols: dict[str, np.ndarray] = {
            "nominal": np.broadcast_to(self.nominal.T[:, None, :], (s_n, d_n, t_n)).reshape(-1),
            "deflator_index": flat(self.index_used),
            "real": flat(self.real),
        }
        st = flat(self.status).astype(np.intp)
        flag = (np.zeros(len(st), dtype=bool) if self.interpolated is None
                else flat(self.interpolated).astype(bool)) if flags else None
        if not present.all():
            keep = np.broadcast_to(present.T[:, None, :], (s_n, d_n, t_n)).reshape(-1)
            s_i, d_i, t_i, st = s_i[keep], d_i[keep], t_i[keep], st[keep]
            cols = {k: v[keep] for k, v in cols.items()}
            flag = flag[keep] if flag is not None else None
        n = len(s_i)
        cat = n > CATEGORICAL_ROWS if categorical is None else categorical

        def text(codes: np.ndarray, labels: Sequence[str]) -> object:
            if cat:
                return pd.Categorical.from_codes(codes, categories=list(labels))
            return pd.array(np.asarray(labels, dtype=object)[codes], dtype="str")

        data: dict[str, object] = {
            "series": text(s_i, self.series_names),
            "deflator": text(d_i, self.deflator_names),
            "period": text(t_i, list(self.period_labels)),
            **cols,
            "status": text(st, STATUSES),
        }
        if flag is not None:
            data["interpolated"] = flag
        return pd.DataFrame(data, columns=[*TABLE_COLUMNS, *(["interpolated"] if flags else [])])

    def implicit_deflator(self, series: str, deflator: str | int = 0) -> pd.Series:
        """100 * nominal / real for one series (the aggregate's implicit deflator)."""
        nom = self.nominal_series(series)
        real = self.real_series(series, deflator)
        return 100.0 * nom / real


# --------------------------------------------------------------------------- helpers


def within_span(present: np.ndarray) -> np.ndarray:
    """(T, S) bool: the period lies between a column's first and last present value."""
    if present.size == 0:
        return present
    t = np.arange(present.shape[0])[:, None]
    any_ = present.any(axis=0)
    first = np.where(any_, present.argmax(axis=0), present.shape[0])
    last = np.where(any_, present.shape[0] - 1 - present[::-1].argmax(axis=0), -1)
    return (t >= first[None, :]) & (t <= last[None, :])


def _missing_inside(nominal: np.ndarray, reported: np.ndarray | None, labels: np.ndarray,
                    names: Sequence[str], freq: Frequency) -> list[Problem]:
    """DF011 per series (at most 20, then one for the rest) with nominal values missing
    between its first and last value, other than periods PE210 already names."""
    present = ~np.isnan(nominal)
    inside = within_span(present) & ~present
    if reported is not None:
        inside &= ~reported
    cols = np.flatnonzero(inside.any(axis=0))
    out: list[Problem] = []
    for j in cols[:20].tolist():
        rows = np.flatnonzero(inside[:, j])
        labs = [str(x) for x in labels[rows]]
        out.append(warn(DF011, f"{names[j]!r} has no nominal value in {len(rows)} period(s) "
                        "inside its span; those rows are kept with empty numbers",
                        expected="a nominal value in every period from the first to the last",
                        found=f"missing {describe_ranges(labs)}", series=str(names[j]),
                        period=labs[0],
                        fix="Supply the missing values, or accept that these periods stay "
                        "empty (they are never filled in or bridged)."))
    if len(cols) > 20:
        more = [names[j] for j in cols[20:]]
        out.append(warn(DF011, f"{len(more)} more series have nominal values missing inside "
                        "their span; those rows are kept with empty numbers",
                        expected="a nominal value in every period from the first to the last",
                        found=_fmt_names(more),
                        fix="Supply the missing values, or accept that these periods stay "
                        "empty (they are never filled in or bridged)."))
    return out


def _rule(kind: str) -> Rule:
    return "last" if kind == "stock" else "sum"


def _index_rule(kind: str) -> Rule:
    """How a deflator is taken over a longer period for a series of ``kind``."""
    return "last" if kind == "stock" else "mean"


@dataclass(frozen=True)
class _Deflator:
    series: Series
    full: pd.PeriodIndex  # contiguous periods at the deflator's frequency
    rebased: np.ndarray  # (len(full),) base = 100
    ranks: np.ndarray  # (len(full),) int8 status ranks
    base_rank: int
    interp: np.ndarray | None = None  # (len(full),) bool: made by interpolation (bridged)
    bridge: str = ""  # words on the interpolation, when the deflator was bridged
    bridge_warnings: tuple[Problem, ...] = ()
    indicator: Series | None = None  # guides a Denton interpolation of this deflator


def _indicator_for(name: str, indicators: Mapping[str, Series] | Series | None) -> Series | None:
    if indicators is None or isinstance(indicators, Series):
        return indicators
    return indicators.get(name)


def _needs_bridge(d: Series, span: Span, freqs: Sequence[Frequency]) -> bool:
    """Whether ``d`` must be interpolated to months to serve at all: its periods do not
    nest with a series' (calendar years and fiscal years starting July), or the base is
    not made of whole periods of it (FY2025 for a calendar-year index)."""
    if d.frequency.code == "M":
        return False
    if any(relation(f, d.frequency) is None for f in freqs):
        return True
    try:
        span.periods_in(d.frequency)
    except RealbasisError:
        return True
    return False


def _bridge(d: Series, method: str, indicator: Series | None
            ) -> tuple[Series, np.ndarray, str, tuple[Problem, ...]]:
    """``d`` interpolated to months by ``method`` (every value flagged), with the words
    for the note."""
    if method == "linear":
        conv = interpolate_index(d, MONTHLY)
        how = "straight lines between mid-period values"
    else:
        from .benchmark import interpolate as denton_interpolate

        conv = denton_interpolate(d, MONTHLY, method="denton", indicator=indicator)
        how = "proportional Denton, keeping each published period's average"
    words = (f"{d.name!r} ({d.frequency.describe()}) was first interpolated to months, "
             f"because its periods do not fit the series' or the base's ({how}; every "
             "value resting on it is flagged as interpolated)")
    return conv.series, np.ones(len(conv.series.index), dtype=bool), words, conv.warnings


def _prepare_deflators(deflators: Sequence[Series], span: Span, *,
                       interpolate: Interpolate = False, freqs: Sequence[Frequency] = (),
                       indicators: Mapping[str, Series] | Series | None = None
                       ) -> list[_Deflator]:
    method = interpolation_method(interpolate)  # an unknown method is refused before any work
    out = []
    problems: list[Problem] = []
    for d in deflators:
        _require_index(d)
        check_index(d)
        interp = None
        bridge = ""
        bridged: tuple[Problem, ...] = ()
        indicator = _indicator_for(d.name, indicators)
        if method and _needs_bridge(d, span, freqs):
            d, interp, bridge, bridged = _bridge(d, method, indicator)
        full = full_range(d.values.dropna().index, d.frequency)
        vals = d.values.reindex(full).to_numpy(dtype=float)
        try:
            mean = base_means(vals, full, d.frequency, span, (d.name,))[0]
        except RealbasisError as err:
            problems.extend(err.problems)
            continue
        ranks = pd.Series(status_ranks(d), index=d.index).reindex(full).fillna(0)
        ranks_a = ranks.to_numpy(dtype=np.int8)
        bpos = full.get_indexer(span.periods_in(d.frequency))
        base_rank = int(ranks_a[bpos].max()) if len(bpos) else 0
        if interp is not None:  # every value of a bridged deflator is interpolated
            interp = np.ones(len(full), dtype=bool)
        out.append(_Deflator(d, full, 100.0 * vals / mean, ranks_a, base_rank, interp, bridge,
                             bridged, indicator))
    if problems:
        raise RealbasisError(problems)
    return out


@dataclass(frozen=True)
class _AtWork:
    """A deflator brought to the working frequency."""

    index: pd.PeriodIndex
    values: np.ndarray
    ranks: np.ndarray
    interpolated: np.ndarray
    words: str
    warnings: tuple[Problem, ...] = ()


def _deflator_at(d: _Deflator, work: Frequency, kind: str, name: str,
                 method: str | None = None) -> _AtWork:
    src = d.series.frequency
    rel = relation(src, work)
    if rel in ("same", "coarser"):
        rule = _index_rule(kind) if rel == "coarser" else "mean"
        g = aggregate_wide(d.rebased, d.full, src, work, rule)
        r = worst_status_wide(d.ranks, g.starts)[:, 0]
        words = (f"{name!r} ({src.describe()}) used as is" if rel == "same" else
                 f"{name!r} ({src.describe()}) taken to {work.describe()} as the "
                 f"{RULE_WORDS[rule]}" + (" (stocks use the index at the period's end)"
                                          if rule == "last" else ""))
        flags = np.zeros(len(g.index), dtype=bool)
        if d.interp is not None and len(g.index):
            flags = np.maximum.reduceat(d.interp.astype(np.int8), g.starts).astype(bool)
            words = f"{d.bridge}; {words}"
        return _AtWork(g.index, g.values[:, 0], r, flags, words, d.bridge_warnings)
    # deflator coarser than the working frequency: interpolate (only asked-for path)
    s = d.series.with_values(pd.Series(d.rebased, index=d.full),
                             status=pd.Series(_STATUS_ARR[d.ranks.astype(np.intp)],
                                              index=d.full, dtype=object))
    if method == "linear":
        conv = interpolate_index(s, work)
    else:
        from .benchmark import interpolate as denton_interpolate

        conv = denton_interpolate(s, work, method="denton", indicator=d.indicator)
    st = conv.series.status_or_final().map({"final": 0, "preliminary": 1, "projected": 2})
    return _AtWork(conv.series.index, conv.series.values.to_numpy(dtype=float),
                   st.to_numpy(dtype=np.int8),
                   np.ones(len(conv.series.index), dtype=bool), conv.method, conv.warnings)


def _fmt_names(names: Sequence[str], limit: int = 5) -> str:
    names = list(names)
    head = ", ".join(repr(n) for n in names[:limit])
    return head + (f" and {len(names) - limit} more" if len(names) > limit else "")


@dataclass(frozen=True)
class _Block:
    periods: pd.PeriodIndex
    names: tuple[str, ...]
    kinds: tuple[str, ...]
    units: tuple[str | None, ...]
    nominal: np.ndarray
    real: np.ndarray
    index_used: np.ndarray
    status: np.ndarray
    interpolated: np.ndarray | None
    method: tuple[str, ...]
    warnings: tuple[Problem, ...]


def _partial_summary(labels: np.ndarray, incomplete: np.ndarray, names: Sequence[str],
                     target: Frequency) -> list[Problem]:
    """One PE210 warning per output period that some series could not complete."""
    out = []
    for t in np.flatnonzero(incomplete.any(axis=1)):
        who = [names[j] for j in np.flatnonzero(incomplete[t])]
        out.append(warn(PE210, f"{labels[t]} left out for {len(who)} series: the period is "
                    f"incomplete", expected=f"every sub-period of {labels[t]} present",
                    found=f"partial data for {_fmt_names(who)}", period=str(labels[t]),
                    fix="Supply the missing sub-periods, or accept that this period is not "
                    "shown."))
    return out


def _block(
    frame: np.ndarray, idx: pd.PeriodIndex, freq: Frequency, kind: str,
    names: tuple[str, ...], units: tuple[str | None, ...], defl: list[_Deflator],
    to: Frequency | None, interpolate: Interpolate, series_ranks: np.ndarray | None = None,
) -> _Block:
    """Deflate one block of series sharing frequency and kind (rows = contiguous idx)."""
    out_freq = to or freq
    rel_out = relation(freq, out_freq)
    if rel_out not in ("same", "coarser"):
        raise fail(DF004, f"cannot show {freq.describe()} series as {out_freq.describe()}",
                   expected=f"a 'to' frequency of {freq.describe()} or longer, aligned with it",
                   found=out_freq.describe(), series=names[0],
                   fix="Choose a longer or aligned 'to' frequency (the engine never splits "
                   "money amounts into shorter periods).")
    flow_rule = _rule(kind)
    present = ~np.isnan(frame)
    g_nom = aggregate_wide(frame, idx, freq, out_freq, flow_rule)
    periods = g_nom.index
    nominal = g_nom.values
    # the money series' own status (e.g. projected out-year budgets), per output period
    s_out = (worst_status_wide(series_ranks, g_nom.starts) if series_ranks is not None
             and len(periods) else None)
    n_t, n_s, n_d = len(periods), frame.shape[1], len(defl)
    real = np.empty((n_d, n_t, n_s))
    index_used: list[np.ndarray] = []
    status: list[np.ndarray] = []
    interp: list[np.ndarray] = []
    method: list[str] = []
    warnings: list[Problem] = []
    problems: list[Problem] = []
    out_labels = np.array(out_freq.labels(periods), dtype=object)
    incomplete = None
    if rel_out == "coarser" and n_t:
        touched = np.add.reduceat(present.astype(np.int32), g_nom.starts, axis=0) > 0
        incomplete = touched & ~g_nom.complete
        warnings.extend(_partial_summary(out_labels, incomplete, names, out_freq))
    if n_t:
        warnings.extend(_missing_inside(nominal, incomplete, out_labels, names, out_freq))
    for k, d in enumerate(defl):
        dname = d.series.name
        dfreq = d.series.frequency
        rel_sd = relation(freq, dfreq)
        if rel_sd is None:
            raise fail(PE201,
                       f"{freq.describe()} series cannot be deflated by {dname!r} "
                       f"({dfreq.describe()}): the periods do not nest",
                       expected="series and deflator periods that fit into one another",
                       found=f"{freq.describe()} and {dfreq.describe()}", series=names[0],
                       fix="Use a deflator whose periods align with the series, or allow "
                       "interpolating it to months (every value resting on an interpolated "
                       "one is then flagged).", remedy="interpolate")
        # working frequency: the highest both share
        work = freq
        if rel_sd == "coarser":
            # series more frequent than its deflator: aggregate the series to the
            # deflator's periods when the output is that long or longer; else interpolate
            # the deflator if asked; else refuse
            if relation(dfreq, out_freq) in ("same", "coarser"):
                work = dfreq
            elif not interpolate:
                raise fail(PE204, f"{_fmt_names(names)} ({freq.describe()}) is more frequent "
                           f"than deflator {dname!r} ({dfreq.describe()})",
                           expected=f"a deflator at {freq.describe()} or more frequent",
                           found=f"{dname!r} is {dfreq.describe()}", series=names[0],
                           fix=f"Show the results at {dfreq.describe()} or longer, use a "
                           "more frequent deflator, or allow interpolation (every "
                           "interpolated value is then flagged).",
                           remedy="result_frequency interpolate")
        at = _deflator_at(d, work, kind, dname, interpolation_method(interpolate))
        warnings.extend(w for w in at.warnings if w not in warnings)
        if work == freq or relation(freq, work) == "same":
            n_w, idx_w = frame, idx
        else:
            g_w = aggregate_wide(frame, idx, freq, work, flow_rule)
            n_w, idx_w = g_w.values, g_w.index
        pos = at.index.get_indexer(relabel_to(idx_w, at.index))
        have = pos >= 0
        dv = np.full(len(idx_w), np.nan)
        dv[have] = at.values[pos[have]]
        dr = np.zeros(len(idx_w), dtype=np.int8)
        dr[have] = at.ranks[pos[have]]
        di = np.zeros(len(idx_w), dtype=bool)
        di[have] = at.interpolated[pos[have]]
        miss = np.isnan(dv)
        if miss.any():
            need = ~np.isnan(n_w[miss])  # (n_missing_rows, S)
            rows = np.flatnonzero(miss)[need.any(axis=1)]
            if len(rows):
                cols = np.flatnonzero(need.any(axis=0))
                labs = work.labels(idx_w[rows])
                problems.append(Problem(
                    DF001, f"deflator {dname!r} has no value for periods that "
                    f"{_fmt_names([names[j] for j in cols])} need",
                    expected=f"{dname!r} covering every {work.describe()} period with a "
                    "nominal value", found=f"missing {describe_ranges(labs)}",
                    fix="Supply the missing index values (or projected ones, marked "
                    "'projected'), or drop those periods from the series.",
                    where=Location(series=names[cols[0]], column=dname,
                                   period=labs[0])))
                continue
        bad = ~(dv[~miss] > 0)
        if bad.any():
            lab = work.labels(idx_w[~miss][bad][:1])[0]
            raise fail(DF007, f"deflator {dname!r} is not positive in {lab}",
                       expected="a positive price index", found=f"{dv[~miss][bad][0]:g}",
                       column=dname, period=lab, fix="Check the index values.")
        factor = 100.0 / dv
        r_w = n_w * factor[:, None]
        rank_w = np.maximum(dr, d.base_rank).astype(np.int8)
        if relation(work, out_freq) == "same":
            # no aggregation: rows of work == rows of output (same stretches)
            real[k] = r_w
            index_used.append(np.broadcast_to(dv[:, None], (n_t, n_s)))
            status.append(_with_series_status(rank_w, s_out, n_t, n_s))
            interp.append(np.broadcast_to(di[:, None], (n_t, n_s)))
            agg_words = f"deflated period by period ({work.describe()})"
        else:
            g_r = aggregate_wide(r_w, idx_w, work, out_freq, flow_rule)
            rp = periods.get_indexer(relabel_to(g_r.index, periods))
            real_k = np.full((n_t, n_s), np.nan)
            ok = rp >= 0
            real_k[rp[ok]] = g_r.values[ok]
            real_k[np.isnan(nominal)] = np.nan
            real[k] = real_k
            st = worst_status_wide(rank_w, g_r.starts)[:, 0]
            st_k = np.zeros(n_t, dtype=np.int8)
            st_k[rp[ok]] = st[ok]
            ip = np.maximum.reduceat(di.astype(np.int8), g_r.starts)
            ip_k = np.zeros(n_t, dtype=bool)
            ip_k[rp[ok]] = ip[ok].astype(bool)
            g_i = aggregate_wide(dv, idx_w, work, out_freq, _index_rule(kind))
            fallback = np.full(n_t, np.nan)
            fallback[rp[ok]] = g_i.values[ok, 0]
            with np.errstate(divide="ignore", invalid="ignore"):
                implicit = 100.0 * nominal / real_k
            implicit = np.where(real_k == 0, fallback[:, None], implicit)
            index_used.append(implicit)
            status.append(_with_series_status(st_k, s_out, n_t, n_s))
            interp.append(np.broadcast_to(ip_k[:, None], (n_t, n_s)))
            agg_words = (f"deflated period by period ({work.describe()}), then "
                         f"{'summed' if flow_rule == 'sum' else 'taken at the last sub-period'}"
                         f" to {out_freq.describe()}; its deflator_index there is the "
                         "implicit deflator 100 x nominal / real")
        pre = ""
        if relation(freq, work) == "coarser":
            how = "summed" if flow_rule == "sum" else "taken at their last sub-period"
            pre = f"the {freq.describe()} series were first {how} to {work.describe()}; "
        method.append(f"Deflator {at.words}; {pre}{agg_words}.")
        used_ranks = rank_w[~np.isnan(n_w).all(axis=1)] if n_s else rank_w[:0]
        if used_ranks.size and used_ranks.max() > 0:
            worst = str(_STATUS_ARR[int(used_ranks.max())])
            why = (f" (the base {defl[k].series.frequency.describe()} values themselves are "
                   f"{_STATUS_ARR[d.base_rank]})" if d.base_rank else "")
            warnings.append(warn(DF010, f"real values under {dname!r} rest on {worst} index "
                            f"values{why}", expected="final index values",
                            found=f"{int((used_ranks > 0).sum())} period(s) not final "
                            f"({work.describe()})", column=dname,
                            fix="Show these figures as provisional; they will move when the "
                            "index is revised."))
    if problems:
        raise RealbasisError(problems)
    any_interp = any(bool(np.any(a)) for a in interp)
    return _Block(
        periods, names, tuple(kind for _ in names), units,
        nominal, real, _stack(index_used, n_t, n_s), _stack(status, n_t, n_s, np.int8),
        _stack(interp, n_t, n_s, bool) if any_interp else None,
        tuple(method), tuple(warnings),
    )


def _with_series_status(vec: np.ndarray, s_out: np.ndarray | None, n_t: int,
                        n_s: int) -> np.ndarray:
    """Status ranks (T, S): the deflator's per period, raised by the series' own."""
    view = np.broadcast_to(vec.astype(np.int8)[:, None], (n_t, n_s))
    return view if s_out is None else np.maximum(view, s_out).astype(np.int8)


def relabel_to(idx: pd.PeriodIndex, like: pd.PeriodIndex) -> pd.PeriodIndex:
    """``idx`` expressed in the period type of ``like`` (for same-stretch relabelling)."""
    if idx.freqstr == like.freqstr:
        return idx
    return idx.asfreq(like.freqstr, how="end")


def _stack(parts: list[np.ndarray], n_t: int, n_s: int, dtype=float) -> np.ndarray:
    if not parts:
        return np.zeros((0, n_t, n_s), dtype=dtype)
    # broadcast views of one vector per deflator stay cheap: stack the vectors, then view
    if all(p.strides[1] == 0 for p in parts if p.ndim == 2 and p.size):
        vec = np.stack([np.asarray(p[:, 0]) if p.shape[1] else np.zeros(n_t, dtype=dtype)
                        for p in parts]).astype(dtype, copy=False)
        return np.broadcast_to(vec[:, :, None], (len(parts), n_t, n_s))
    return np.stack([np.asarray(p) for p in parts]).astype(dtype, copy=False)


# --------------------------------------------------------------------------- public API


def _resolve_fy(fy_start: int | None, to: Frequency | None, freqs: Sequence[Frequency]) -> int | None:
    if fy_start is not None:
        return fy_start
    if to is not None and to.is_fiscal:
        return to.fy_start
    starts = {f.fy_start for f in freqs if f.is_fiscal}
    return starts.pop() if len(starts) == 1 else None


def _common_note(span: Span, deflators: Sequence[Series], out: Frequency,
                 interpolate: Interpolate) -> list[str]:
    lines = [
        f"Constant {span.label} dollars: real = nominal x I(base) / I(t), each deflator "
        f"rebased so that its average over {span.describe()} = 100 (deflator_index).",
        "Deflation is done at the highest frequency the series and its deflator share; "
        "flows are then summed and stocks take the period's last value (IMF Quarterly "
        "National Accounts Manual 2017, ch. 8); only complete periods are shown.",
        "Status: each real value carries the worst status (projected > preliminary > final) "
        "of the index values it rests on, including the base-period values, and of the "
        "nominal values it sums (e.g. projected out-year amounts).",
        f"Results are {out.describe()}.",
    ]
    method = interpolation_method(interpolate)
    if method:
        how = ("proportional Denton, keeping each published period's average" if
               method == "denton" else "straight lines between mid-period values")
        lines.append(f"Interpolation was allowed ({how}): real values resting on "
                     "interpolated index values are flagged (column 'interpolated').")
    return lines


def deflate_frame(
    nominal: pd.DataFrame, deflators: Sequence[Series], base: str | Span | pd.Period, *,
    frequency: Frequency, kind: Kind = "flow", to: Frequency | None = None,
    interpolate: Interpolate = False, fy_start: int | None = None,
    units: Sequence[str | None] | None = None,
    indicators: Mapping[str, Series] | Series | None = None,
) -> DeflationResult:
    """Vectorised core: deflate every column of a wide frame (PeriodIndex rows of
    ``frequency``, one column per series of the same ``kind``) by every deflator."""
    if kind == "index":
        raise fail(DF003, "price indexes are not deflated", expected="flow or stock series",
                   found="kind 'index'", fix="Deflate money series; rebase indexes instead.")
    if not deflators:
        raise fail(DF006, "no deflator given", expected="at least one price index",
                   found="none", fix="Give one or more price indexes.",
                   remedy="deflator_missing")
    names = tuple(str(c) for c in nominal.columns)
    _unique(names, "series")
    _unique(tuple(d.name for d in deflators), "deflator")
    fy = _resolve_fy(fy_start, to, [frequency, *(d.frequency for d in deflators)])
    span = parse_span(base, fy)
    defl = _prepare_deflators(deflators, span, interpolate=interpolate,
                              freqs=(frequency, *((to,) if to else ())), indicators=indicators)
    idx = nominal.index
    full = full_range(idx, frequency) if len(idx) else idx
    arr = nominal.to_numpy(dtype=float)
    if len(full) != len(idx) or (len(idx) and not full.equals(idx)):
        arr = nominal.reindex(full).to_numpy(dtype=float)
    b = _block(arr, full, frequency, kind, names,
               tuple(units) if units is not None else (None,) * len(names), defl, to,
               interpolate)
    return _result(span, to or frequency, [b], defl, interpolate)


def _unique(names: tuple[str, ...], what: str) -> None:
    seen: set[str] = set()
    dup = [n for n in names if n in seen or seen.add(n)]  # type: ignore[func-returns-value]
    if dup:
        raise fail(DF005, f"{what} names must be unique", expected=f"distinct {what} names",
                   found=f"repeated: {_fmt_names(sorted(set(dup)))}",
                   fix=f"Rename the repeated {what} (e.g. add the source file or vintage).")


def _result(span: Span, out: Frequency, blocks: list[_Block], defl: list[_Deflator],
            interpolate: Interpolate) -> DeflationResult:
    method = _common_note(span, [d.series for d in defl], out, interpolate)
    warnings: list[Problem] = []
    for b in blocks:
        for m in b.method:
            if m not in method:
                method.append(m)
        warnings.extend(b.warnings)
    if len(blocks) == 1:
        b = blocks[0]
        periods, nominal, real, iu, st, ip = (b.periods, b.nominal, b.real, b.index_used,
                                              b.status, b.interpolated)
    else:
        periods = blocks[0].periods
        for b in blocks[1:]:
            periods = periods.union(relabel_to(b.periods, periods))
        n_t = len(periods)
        n_s = sum(len(b.names) for b in blocks)
        n_d = len(defl)
        nominal = np.full((n_t, n_s), np.nan)
        real = np.full((n_d, n_t, n_s), np.nan)
        iu = np.full((n_d, n_t, n_s), np.nan)
        st = np.zeros((n_d, n_t, n_s), dtype=np.int8)
        ip = (np.zeros((n_d, n_t, n_s), dtype=bool)
              if any(b.interpolated is not None for b in blocks) else None)
        j = 0
        for b in blocks:
            rows = periods.get_indexer(relabel_to(b.periods, periods))
            cols = slice(j, j + len(b.names))
            nominal[rows, cols] = b.nominal
            real[:, rows, cols] = b.real
            iu[:, rows, cols] = b.index_used
            st[:, rows, cols] = b.status
            if ip is not None and b.interpolated is not None:
                ip[:, rows, cols] = b.interpolated
            j += len(b.names)
    if len(periods) and periods.freqstr != out.pandas_freq and relation(
            _freq_of_index(periods), out) == "same":
        periods = periods.asfreq(out.pandas_freq, how="end")
    return DeflationResult(
        base=span, frequency=out, periods=periods,
        series_names=tuple(n for b in blocks for n in b.names),
        deflator_names=tuple(d.series.name for d in defl),
        kinds=tuple(k for b in blocks for k in b.kinds),
        units=tuple(u for b in blocks for u in b.units),
        nominal=nominal, real=real, index_used=iu, status=st, interpolated=ip,
        method=tuple(method), warnings=tuple(warnings),
        deflators_used=tuple(
            d.series.with_values(pd.Series(d.rebased, index=d.full, name=d.series.name),
                                 status=None if d.series.status is None else pd.Series(
                                     _STATUS_ARR[np.maximum(d.ranks, d.base_rank)
                                                 .astype(np.intp)], index=d.full,
                                     dtype=object),
                                 reference=span.label)
            for d in defl),
    )


def _freq_of_index(idx: pd.PeriodIndex) -> Frequency:
    from .periods import frequency_of_period

    return frequency_of_period(idx[0])


def deflate(
    series: Sequence[Series], deflators: Sequence[Series], base: str | Span | pd.Period, *,
    to: Frequency | None = None, interpolate: Interpolate = False, kind: Kind | None = None,
    fy_start: int | None = None, indicators: Mapping[str, Series] | Series | None = None,
) -> DeflationResult:
    """Deflate every series by every deflator into constant dollars of ``base``.

    ``base``: a period label the intake accepts (FY2025, 2024Q1, 2024-01, 2024,
    FY2025Q1), a range ``2024-01..2024-12``, a Span or a pandas Period. FY labels use
    ``fy_start``, else the fiscal start of ``to``, else that of a fiscal input.
    ``to``: the frequency of the results (default: the series' own, which must then be
    shared by all series). ``kind`` overrides every series' kind (flow or stock).
    ``interpolate``: allow interpolating a deflator less frequent than a series (every
    value resting on an interpolated index value is flagged): ``True`` or ``"denton"``
    for proportional Denton (each published period's average is kept; IMF QNA Manual
    2017, ch. 6), ``"linear"`` for straight lines between mid-period values.
    ``indicators``: a more frequent index that guides the Denton interpolation of a
    deflator -- one Series for every deflator, or a mapping by deflator name.
    """
    if not series:
        raise fail(DF006, "no series to deflate", expected="one or more money series",
                   found="none", fix="Give the nominal series to deflate.")
    if not deflators:
        raise fail(DF006, "no deflator given", expected="at least one price index",
                   found="none", fix="Give one or more price indexes.",
                   remedy="deflator_missing")
    _unique(tuple(s.name for s in series), "series")
    _unique(tuple(d.name for d in deflators), "deflator")
    for s in series:
        check_index(s)
        k = kind or s.kind
        if k == "index":
            raise fail(DF003, f"{s.name!r} is a price index, not a money amount",
                       expected="flow or stock series", found="kind 'index'", series=s.name,
                       fix="Deflate money series and use indexes as deflators, or say the "
                       "series is a flow or a stock.", remedy="series_kind")
    freqs = {s.frequency for s in series}
    if to is None and len(freqs) > 1:
        raise fail(DF002, "the series have different frequencies",
                   expected="one frequency, or a common 'to' frequency",
                   found=", ".join(sorted(f.describe() for f in freqs)),
                   fix="Say which frequency the results should have.",
                   remedy="result_frequency")
    fy = _resolve_fy(fy_start, to, [*freqs, *(d.frequency for d in deflators)])
    span = parse_span(base, fy)
    defl = _prepare_deflators(deflators, span, interpolate=interpolate,
                              freqs=(*freqs, *((to,) if to else ())), indicators=indicators)
    groups: dict[tuple[Frequency, str], list[Series]] = {}
    for s in series:
        groups.setdefault((s.frequency, kind or s.kind), []).append(s)
    blocks = []
    for (freq, k), members in groups.items():
        starts = [m.index.min() for m in members if len(m.index)]
        ends = [m.index.max() for m in members if len(m.index)]
        full = (pd.period_range(min(starts), max(ends), freq=freq.pandas_freq) if starts
                else pd.PeriodIndex([], freq=freq.pandas_freq))
        arr = np.column_stack([
            (m.values if m.index.equals(full) else m.values.reindex(full)).to_numpy(dtype=float)
            for m in members]) if len(full) else np.zeros((0, len(members)))
        ranks = None
        if any(m.status is not None for m in members):
            ranks = np.column_stack([
                pd.Series(status_ranks(m), index=m.index).reindex(full).fillna(0)
                .to_numpy(dtype=np.int8) for m in members]) if len(full) else None
        blocks.append(_block(arr, full, freq, k, tuple(m.name for m in members),
                             tuple(m.unit for m in members), defl, to, interpolate, ranks))
    out = to or next(iter(freqs))
    return _result(span, out, blocks, defl, interpolate)
