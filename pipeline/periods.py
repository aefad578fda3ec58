"""Calendars: calendar and fiscal years, fiscal quarters, frequency conversion, base spans.

Conventions (see pipeline.model.Frequency):

* A fiscal year is labelled by the calendar year in which it ends: July 2024 to June 2025
  is FY2025. That is how pandas labels annual periods anchored on the year's last month
  (``Y-JUN``); fiscal quarters use ``Q-JUN`` (FY2025Q1 = July to September 2024).
* Converting to a longer period (:func:`to_frequency`): an index becomes the simple
  average of its sub-periods, a flow the sum, a stock the value of the period's last
  sub-period. Only complete periods are kept; each partial period dropped is reported as
  a warning (code PE210).
* Converting to a shorter period is refused (PE204) unless interpolation is allowed and
  the series is an index: ``interpolate=True`` or ``"denton"`` (proportional Denton,
  keeping each period's average: :func:`pipeline.benchmark.interpolate`) or ``"linear"``
  (:func:`interpolate_index`); interpolated values are then flagged one by one
  (:attr:`Converted.interpolated`) and the method note says how they were made.

All grouping work is done on 2-D numpy arrays (:func:`aggregate_wide`) so that many
series convert in one pass.
"""

from __future__ import annotations

import calendar
import functools
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
import pandas as pd

from .errors import Problem, fail, register, warn
from .model import STATUS_RANK, STATUSES, Frequency, Series

PE201 = register("PE201", "frequencies do not nest")
PE202 = register("PE202", "base period or span not understood")
PE203 = register("PE203", "base span does not fit the series' frequency")
PE204 = register("PE204", "series more frequent than its deflator")
PE205 = register("PE205", "interpolation needs an index with at least two values")
PE206 = register("PE206", "only price indexes can be interpolated")
PE207 = register("PE207", "period index has the wrong frequency")
PE208 = register("PE208", "index values interpolated to shorter periods")
PE210 = register("PE210", "partial period left out of a conversion")

Rule = Literal["mean", "sum", "last"]
Relation = Literal["same", "coarser", "finer"]
_MONTHS = {m.upper(): i for i, m in enumerate(calendar.month_abbr) if m}
_RULE_OF_KIND: dict[str, Rule] = {"index": "mean", "flow": "sum", "stock": "last"}
RULE_WORDS: dict[str, str] = {
    "mean": "simple average of its sub-periods",
    "sum": "sum of its sub-periods",
    "last": "value of its last sub-period",
}


# --------------------------------------------------------------------------- frequencies


def relation(source: Frequency, target: Frequency) -> Relation | None:
    """How ``target`` periods relate to ``source`` periods.

    ``'same'``: the same stretches of time (perhaps labelled differently, e.g. calendar
    quarters labelled as fiscal quarters, or A and FY starting January); ``'coarser'``:
    every source period lies inside exactly one target period (months into fiscal
    years; calendar quarters into fiscal years starting April); ``'finer'``: the
    reverse; ``None``: they do not nest (calendar quarters and a fiscal year starting
    February).
    """
    ms, mt = source.months_per_period, target.months_per_period
    if ms == mt:
        return "same" if (source.fy_start - target.fy_start) % ms == 0 else None
    if ms < mt:
        return "coarser" if (source.fy_start - target.fy_start) % ms == 0 else None
    return "finer" if (source.fy_start - target.fy_start) % mt == 0 else None


def fiscal_quarters(start_month: int) -> Frequency:
    """Quarters of a fiscal year starting in ``start_month`` (labelled FY2025Q1 ...)."""
    return Frequency("Q", start_month)


def first_months(index: pd.PeriodIndex) -> np.ndarray:
    """Month ordinals (pandas 'M' ordinals) of the first month of each period."""
    return np.asarray(index.asfreq("M", how="start").asi8)


def last_months(index: pd.PeriodIndex) -> np.ndarray:
    """Month ordinals of the last month of each period."""
    return np.asarray(index.asfreq("M", how="end").asi8)


def full_range(index: pd.PeriodIndex, frequency: Frequency) -> pd.PeriodIndex:
    """Every period of ``frequency`` from the first to the last of ``index``."""
    if len(index) == 0:
        return pd.PeriodIndex([], freq=frequency.pandas_freq)
    return pd.period_range(index.min(), index.max(), freq=frequency.pandas_freq)


def relabel(index: pd.PeriodIndex, frequency: Frequency) -> pd.PeriodIndex:
    """The same stretches of time as periods of ``frequency`` (for ``relation == 'same'``)."""
    return index.asfreq(frequency.pandas_freq, how="end")


@functools.lru_cache(maxsize=64)
def _freqstr(pandas_freq: str) -> str:
    return pd.Period("2000-01", "M").asfreq(pandas_freq).freqstr


def check_index(series: Series) -> None:
    """Refuse a Series whose PeriodIndex does not carry its declared frequency."""
    idx = series.index
    expected = _freqstr(series.frequency.pandas_freq)
    if idx.freqstr != expected:
        raise fail(
            PE207,
            f"series {series.name!r} is declared {series.frequency.describe()} but its "
            f"periods are {idx.freqstr}",
            expected=expected, found=idx.freqstr, series=series.name,
            fix="Build the Series with values on a PeriodIndex of frequency.pandas_freq.",
        )


# --------------------------------------------------------------------------- spans


@dataclass(frozen=True)
class Span:
    """A base period or a range of periods, e.g. FY2025, 2024Q1 or 2024-01..2024-12.

    ``start`` and ``end`` are pandas Periods of ``frequency`` (equal for a single period).
    """

    start: pd.Period
    end: pd.Period
    frequency: Frequency

    def __post_init__(self) -> None:
        if self.end < self.start:
            raise fail(
                PE202, "a base range must run forwards",
                expected="START..END with START no later than END",
                found=f"{self.frequency.label(self.start)}..{self.frequency.label(self.end)}",
                fix="Swap the two ends of the range.",
            )

    @classmethod
    def of(cls, period: pd.Period, frequency: Frequency | None = None) -> Span:
        """A single-period span; the frequency defaults to the period's own (calendar)."""
        freq = frequency or frequency_of_period(period)
        return cls(period, period, freq)

    @property
    def is_single(self) -> bool:
        return self.start == self.end

    @property
    def label(self) -> str:
        """Canonical text: FY2025, 2024Q1, 2024-01..2024-12."""
        a = self.frequency.label(self.start)
        return a if self.is_single else f"{a}..{self.frequency.label(self.end)}"

    @property
    def first_month(self) -> int:
        return int(self.start.asfreq("M", how="start").ordinal)

    @property
    def last_month(self) -> int:
        return int(self.end.asfreq("M", how="end").ordinal)

    @property
    def n_months(self) -> int:
        return self.last_month - self.first_month + 1

    def describe(self) -> str:
        first = pd.Period(ordinal=self.first_month, freq="M")
        last = pd.Period(ordinal=self.last_month, freq="M")
        if self.n_months == 1:
            return f"{self.label} ({first.strftime('%B %Y')})"
        return f"{self.label} ({first.strftime('%B %Y')} to {last.strftime('%B %Y')})"

    def periods_in(self, frequency: Frequency) -> pd.PeriodIndex:
        """The periods of ``frequency`` that make up this span exactly.

        A monthly index rebased to FY2025 (July start) uses its 12 months July 2024 to
        June 2025; a quarterly one its 4 quarters. Raises PE203 when the span is not made
        of whole periods of ``frequency`` (an annual index cannot be averaged over
        2024-03; calendar quarters do not fit a fiscal year starting February).
        """
        pf = frequency.pandas_freq
        first = pd.Period(ordinal=self.first_month, freq="M").asfreq(pf)
        last = pd.Period(ordinal=self.last_month, freq="M").asfreq(pf)
        ok = (
            first.asfreq("M", how="start").ordinal == self.first_month
            and last.asfreq("M", how="end").ordinal == self.last_month
        )
        if not ok:
            raise fail(
                PE203,
                f"the base {self.label} is not made of whole periods of the index "
                f"({frequency.describe()})",
                expected=f"a base made of whole periods ({frequency.describe()})",
                found=self.describe(),
                fix="Choose a base period or range that starts and ends on period boundaries "
                "of the index (or convert the index to a matching frequency first).",
                period=self.label,
            )
        return pd.period_range(first, last, freq=pf)


def frequency_of_period(period: pd.Period) -> Frequency:
    """The Frequency a pandas Period belongs to (fiscal ones from their anchor month)."""
    fs = period.freqstr
    if fs == "M":
        return Frequency("M")
    head, _, anchor = fs.partition("-")
    end = _MONTHS.get(anchor or "DEC")
    if head in ("Q", "Y", "A") and end is not None:
        start = end % 12 + 1
        if head == "Q":
            return Frequency("Q", start)
        return Frequency("A") if start == 1 else Frequency("FY", start)
    raise fail(PE207, f"unsupported period frequency {fs}", expected="M, Q-*, Y-*", found=fs,
               fix="Use monthly, quarterly or annual periods.")


def parse_span(text: str | Span | pd.Period, hint: Frequency | int | None = None) -> Span:
    """Read a base period or range: ``FY2025``, ``2024Q1``, ``2024-01``, ``2024``,
    ``FY2025Q1``, any label the intake accepts, or ``START..END`` (``2024-01..2024-12``).

    ``hint`` gives the fiscal-year start month for FY labels, either as an int (1-12) or
    as a fiscal Frequency. Labels are read by :func:`pipeline.labels.parse_label`.
    """
    if isinstance(text, Span):
        return text
    if isinstance(text, pd.Period):
        return Span.of(text)
    fy_start = hint if not isinstance(hint, Frequency) else (
        hint.fy_start if hint.is_fiscal else None)
    raw = str(text).strip()
    if not raw:
        raise fail(PE202, "no base period given", expected="a period label such as FY2025, "
                   "2024Q1, 2024-01, 2024 or a range 2024-01..2024-12", found="(empty)",
                   fix="Give the base period.")
    parts = [p.strip() for p in raw.split("..")]
    if len(parts) > 2 or any(not p for p in parts):
        raise fail(PE202, f"base {raw!r} is not a period or a START..END range",
                   expected="FY2025, 2024Q1, 2024-01, 2024 or 2024-01..2024-12", found=raw,
                   fix="Write one period label, or two joined by '..'.")
    from . import labels  # H1's shared label reader

    # H1's reader raises its own coded error (PE101/PE102 ...) for a bad label
    parsed = [labels.parse_label(part, fy_start) for part in parts]
    (p0, f0) = parsed[0]
    (p1, f1) = parsed[-1]
    if f0 != f1:
        raise fail(PE202, f"the two ends of base range {raw!r} have different frequencies",
                   expected="both ends monthly, both quarterly or both years",
                   found=f"{f0.describe()} and {f1.describe()}",
                   fix="Write both ends the same way, e.g. 2024-01..2024-12.")
    return Span(p0, p1.asfreq(f0.pandas_freq), f0)


# --------------------------------------------------------------------------- aggregation


@dataclass(frozen=True)
class Grouped:
    """Result of :func:`aggregate_wide`: values per target period and which were complete."""

    index: pd.PeriodIndex  # target periods (every one touched by the source rows)
    values: np.ndarray  # (n_target, n_columns) float, NaN where incomplete
    complete: np.ndarray  # (n_target, n_columns) bool
    starts: np.ndarray  # row where each target group starts in the source array
    ends: np.ndarray  # row after each group's last source row


def _groups(index: pd.PeriodIndex, target: Frequency) -> tuple[pd.PeriodIndex, np.ndarray, np.ndarray]:
    codes = index.asfreq(target.pandas_freq, how="end")
    o = np.asarray(codes.asi8)
    if len(o) == 0:
        return codes, np.zeros(0, dtype=np.intp), np.zeros(0, dtype=np.intp)
    brk = np.flatnonzero(np.diff(o) != 0) + 1
    starts = np.concatenate(([0], brk)).astype(np.intp)
    ends = np.concatenate((brk, [len(o)])).astype(np.intp)
    return codes[starts], starts, ends


def aggregate_wide(
    values: np.ndarray, index: pd.PeriodIndex, source: Frequency, target: Frequency, rule: Rule
) -> Grouped:
    """Convert a 2-D array (rows = contiguous, sorted periods of ``source``) to ``target``.

    ``rule``: 'mean' (indexes), 'sum' (flows) or 'last' (stocks). A target period is
    complete when every one of its sub-periods is present and not NaN ('mean', 'sum'), or
    when its last sub-period is present and not NaN ('last').
    """
    rel = relation(source, target)
    if rel not in ("coarser", "same"):
        raise fail(PE201, f"cannot aggregate {source.describe()} to {target.describe()}",
                   expected="a target made of whole source periods",
                   found=f"{source.describe()} -> {target.describe()}",
                   fix="Choose a target frequency whose periods contain whole source periods.")
    arr = np.asarray(values, dtype=float)
    if arr.ndim == 1:
        arr = arr[:, None]
    tidx, starts, ends = _groups(index, target)
    n_sub = target.months_per_period // source.months_per_period
    if len(tidx) == 0:
        empty = np.zeros((0, arr.shape[1]))
        return Grouped(tidx, empty, empty.astype(bool), starts, ends)
    ok = ~np.isnan(arr)
    if rule == "last":
        last_row = ends - 1
        # the group's last source row must be the target period's last sub-period
        sub_last = last_months(index[last_row])
        tgt_last = last_months(tidx)
        has_last = sub_last == tgt_last
        out = arr[last_row]
        complete = ok[last_row] & has_last[:, None]
    else:
        filled = np.where(ok, arr, 0.0)
        sums = np.add.reduceat(filled, starts, axis=0)
        counts = np.add.reduceat(ok.astype(np.int32), starts, axis=0)
        complete = counts == n_sub
        out = sums / n_sub if rule == "mean" else sums
    out = np.where(complete, out, np.nan)
    return Grouped(tidx, out, complete, starts, ends)


def worst_status_wide(ranks: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """Worst status rank (final 0 < preliminary 1 < projected 2) of each group of rows."""
    r = np.asarray(ranks)
    if r.ndim == 1:
        r = r[:, None]
    if len(starts) == 0:
        return np.zeros((0, r.shape[1]), dtype=np.int8)
    return np.maximum.reduceat(r, starts, axis=0).astype(np.int8)


_RANK_TO_STATUS = np.array(STATUSES, dtype=object)


def status_ranks(series: Series) -> np.ndarray:
    """Per-period status of a Series as int8 ranks (0 final, 1 preliminary, 2 projected)."""
    if series.status is None:
        return np.zeros(len(series.values), dtype=np.int8)
    st = series.status_or_final()
    return st.map(STATUS_RANK).fillna(0).to_numpy(dtype=np.int8)


def ranks_to_status(ranks: np.ndarray) -> np.ndarray:
    return _RANK_TO_STATUS[np.asarray(ranks, dtype=np.intp)]


# --------------------------------------------------------------------------- to_frequency


@dataclass(frozen=True)
class Converted:
    """A series converted to another frequency, with what happened on the way.

    ``interpolated`` is a boolean Series on the new index, True for every value made by
    interpolation (None when no interpolation took place). ``method`` says in words how
    the values were made.
    """

    series: Series
    method: str
    warnings: tuple[Problem, ...] = ()
    interpolated: pd.Series | None = None


def _partial_warnings(name: str, idx: pd.PeriodIndex, complete: np.ndarray,
                      target: Frequency, rule: Rule, present: np.ndarray) -> tuple[Problem, ...]:
    out = []
    for i in np.flatnonzero(present & ~complete):
        lab = target.label(idx[i])
        need = "its last sub-period" if rule == "last" else "every sub-period"
        out.append(warn(PE210, f"{lab} left out of {name!r}: the period is incomplete",
                        expected=f"{need} present to form {lab}",
                        found="some sub-periods missing", series=name, period=lab,
                        fix="Supply the missing sub-periods, or accept that this period is "
                        "not shown."))
    return tuple(out)


def to_frequency(series: Series, target: Frequency, *, interpolate: bool | str = False,
                 rule: Rule | None = None) -> Converted:
    """Convert ``series`` to ``target`` frequency.

    To longer periods: index -> mean, flow -> sum, stock -> last sub-period (``rule``
    overrides, e.g. 'last' to take a monthly index at quarter ends for stocks); partial
    periods are left out and reported (PE210). Status: each new value takes the worst
    status of the values it rests on.

    To shorter periods: refused (PE204) unless ``interpolate`` and the series is an index:
    ``True``/``"denton"`` keeps each period's average (:func:`pipeline.benchmark.interpolate`),
    ``"linear"`` draws straight lines (:func:`interpolate_index`).
    """
    check_index(series)
    src = series.frequency
    rel = relation(src, target)
    name = series.name
    if rel is None:
        raise fail(PE201, f"{src.describe()} periods of {name!r} do not fit into "
                   f"{target.describe()}", expected="frequencies whose periods nest",
                   found=f"{src.describe()} and {target.describe()}", series=name,
                   fix="Pick a target frequency aligned with the series (e.g. a fiscal year "
                   "starting on a quarter boundary for quarterly data).")
    if rel == "same":
        vals = series.values.copy()
        vals.index = relabel(series.index, target)
        st = None
        if series.status is not None:
            st = series.status.copy()
            st.index = vals.index
        return Converted(series.with_values(vals, frequency=target, status=st),
                         f"{name}: same periods, labelled as {target.describe()}")
    if rel == "finer":
        if not interpolate:
            raise fail(PE204, f"{name!r} would need {target.describe()} values but is "
                       f"{src.describe()}",
                       expected=f"a series at {target.describe()} or a longer period",
                       found=src.describe(), series=name,
                       fix="Use a deflator at least as frequent as the series, show the "
                       "results at the deflator's frequency, or allow interpolation (every "
                       "interpolated value is then flagged).",
                       remedy="result_frequency interpolate")
        from .benchmark import DEFAULT_METHOD
        from .benchmark import interpolate as interpolate_by

        return interpolate_by(series, target,
                              method=DEFAULT_METHOD if interpolate is True else str(interpolate))
    rule = rule or _RULE_OF_KIND[series.kind]
    full = full_range(series.index, src)
    vals = series.values.reindex(full).to_numpy(dtype=float)
    g = aggregate_wide(vals, full, src, target, rule)
    present = np.ones(len(g.index), dtype=bool)
    warnings = _partial_warnings(name, g.index, g.complete[:, 0], target, rule, present)
    keep = g.complete[:, 0]
    new_idx = g.index[keep]
    new_vals = pd.Series(g.values[keep, 0], index=new_idx, name=series.values.name)
    status = None
    if series.status is not None:
        ranks = pd.Series(status_ranks(series), index=series.index).reindex(full).fillna(0)
        worst = worst_status_wide(ranks.to_numpy(dtype=np.int8), g.starts)[keep, 0]
        status = pd.Series(ranks_to_status(worst), index=new_idx, dtype=object)
    method = (f"{name}: {src.describe()} to {target.describe()}, each period the "
              f"{RULE_WORDS[rule]}; only complete periods kept")
    out = series.with_values(new_vals, frequency=target, status=status)
    return Converted(out, method, warnings)


def interpolate_index(series: Series, target: Frequency) -> Converted:
    """Interpolate an index to shorter periods (e.g. quarterly or annual to monthly).

    Method: each source value is placed at the middle of its period; target values are
    read off the straight line between neighbouring midpoints and held flat beyond the
    first and last midpoints. Every resulting value is flagged as interpolated, and takes
    the worst status of the (one or two) source values it was read from.
    """
    src = series.frequency
    name = series.name
    if series.kind != "index":
        raise fail(PE206, f"{name!r} is a {series.kind}; only price indexes are interpolated",
                   expected="an index series", found=series.kind, series=name,
                   fix="Show the money series at a longer period instead.",
                   remedy="result_frequency")
    if relation(src, target) != "finer":
        raise fail(PE201, f"cannot interpolate {src.describe()} to {target.describe()}",
                   expected="a target whose periods nest in the source periods",
                   found=f"{src.describe()} -> {target.describe()}", series=name,
                   fix="Choose an aligned target frequency.")
    v = series.values.dropna()
    if len(v) < 2:
        raise fail(PE205, f"{name!r} has {len(v)} value(s); interpolation needs two",
                   expected="at least two index values", found=str(len(v)), series=name,
                   fix="Supply more index values or a more frequent index.")
    idx = v.index  # type: ignore[assignment]
    src_mid = (first_months(idx) + last_months(idx)) / 2.0
    first = pd.Period(ordinal=int(first_months(idx[:1])[0]), freq="M").asfreq(target.pandas_freq)
    last = pd.Period(ordinal=int(last_months(idx[-1:])[0]), freq="M").asfreq(target.pandas_freq)
    tidx = pd.period_range(first, last, freq=target.pandas_freq)
    t_mid = (first_months(tidx) + last_months(tidx)) / 2.0
    vals = np.interp(t_mid, src_mid, v.to_numpy(dtype=float))
    status = None
    if series.status is not None:
        ranks = pd.Series(status_ranks(series), index=series.index).reindex(idx).to_numpy()
        hi = np.clip(np.searchsorted(src_mid, t_mid, side="left"), 0, len(idx) - 1)
        lo = np.clip(np.searchsorted(src_mid, t_mid, side="right") - 1, 0, len(idx) - 1)
        status = pd.Series(ranks_to_status(np.maximum(ranks[lo], ranks[hi])), index=tidx,
                           dtype=object)
    new = series.with_values(pd.Series(vals, index=tidx, name=series.values.name),
                             frequency=target, status=status,
                             notes=(*series.notes, "interpolated"))
    flags = pd.Series(True, index=tidx)
    method = (f"{name}: {src.describe()} index interpolated to {target.describe()} "
              "(straight line between mid-period values, held flat beyond the first and "
              "last; every such value is flagged as interpolated)")
    w = warn(PE208, f"{name!r} was interpolated from {src.describe()} to {target.describe()}",
             expected=f"an index measured at {target.describe()}",
             found=f"{src.describe()} values, interpolated on request", series=name,
             fix="Use a measured index at the series' frequency where one exists.")
    return Converted(new, method, (w,), flags)


def common_frequency(a: Frequency, b: Frequency) -> Frequency | None:
    """The most frequent frequency both ``a`` and ``b`` can be expressed in without
    interpolation: the coarser of the two when they nest, else None."""
    rel = relation(a, b)
    if rel is None:
        return None
    return b if rel == "coarser" else a


def describe_ranges(labels: Sequence[str]) -> str:
    """'2024-01, 2024-02, 2024-03' -> a short text for messages (first few and a count)."""
    labs = list(labels)
    if len(labs) <= 6:
        return ", ".join(labs)
    return f"{', '.join(labs[:3])} ... {', '.join(labs[-2:])} ({len(labs)} periods)"
