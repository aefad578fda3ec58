"""Index operations: rebase to any period or span, link two segments at an overlap.

Rebasing: I'(t) = 100 * I(t) / mean(I over the base span). The base span is expressed in
the index's own periods: a monthly index rebased to FY2025 (July start) is divided by the
mean of its 12 months July 2024 - June 2025; a quarterly one by its 4 quarters. Percent
changes do not move.

Linking at an overlap o (one period, or a span such as a year whose average is used):
I(t) = I_new(t) * I_old(o) / I_new(o) from the overlap on, the old segment before it.

Status: a rebased or linked value rests on the base (or overlap) values too, so it takes
the worst status (projected > preliminary > final) of its own value and of every value
in the base span (or overlap).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from .errors import Location, Problem, RealbasisError, fail, register, warn
from .model import ANNUAL, Frequency, Series
from .periods import (
    Span,
    check_index,
    describe_ranges,
    parse_span,
    ranks_to_status,
    status_ranks,
)

IX001 = register("IX001", "index values missing in the base period")
IX002 = register("IX002", "base period mean is not positive")
IX003 = register("IX003", "indexes to link have different frequencies")
IX004 = register("IX004", "no overlap to link the index segments")
IX005 = register("IX005", "index values missing in the overlap")
IX006 = register("IX006", "not an index series")
IX007 = register("IX007", "index value not positive")


def as_span(base: str | Span | pd.Period, frequency: Frequency,
            fy_start: int | None = None) -> Span:
    """A base given as text, Span or Period; FY labels are read with ``fy_start`` or else
    the index's own fiscal start (a monthly index has none: pass ``fy_start``)."""
    return parse_span(base, fy_start if fy_start is not None else frequency)


def base_positions(index: pd.PeriodIndex, frequency: Frequency, span: Span) -> np.ndarray:
    """Positions in ``index`` of the periods making up ``span`` (-1 where absent)."""
    periods = span.periods_in(frequency)
    return np.asarray(index.get_indexer(periods))


def base_means(
    values: np.ndarray, index: pd.PeriodIndex, frequency: Frequency, span: Span,
    names: tuple[str, ...],
) -> np.ndarray:
    """Mean over the base span of each column of ``values`` (rows = ``index``).

    Raises IX001 listing the base periods missing for each column, IX002 when a mean is
    not positive.
    """
    arr = np.asarray(values, dtype=float)
    if arr.ndim == 1:
        arr = arr[:, None]
    periods = span.periods_in(frequency)
    pos = np.asarray(index.get_indexer(periods))
    problems: list[Problem] = []
    present = pos >= 0
    block = np.full((len(pos), arr.shape[1]), np.nan)
    block[present] = arr[pos[present]]
    missing = np.isnan(block)
    for j in np.flatnonzero(missing.any(axis=0)):
        labs = frequency.labels(periods[missing[:, j]])
        problems.append(Problem(
            IX001, f"index {names[j]!r} has no value for part of the base {span.label}",
            expected=f"values for every period of {span.describe()}",
            found=f"missing {describe_ranges(labs)}",
            fix="Choose a base period the index covers, or supply the missing values.",
            where=Location(series=names[j], period=span.label),
        ))
    if problems:
        raise RealbasisError(problems)
    means = block.mean(axis=0)
    bad = np.flatnonzero(~(means > 0))
    if len(bad):
        j = int(bad[0])
        raise fail(IX002, f"index {names[j]!r} averages {means[j]:g} over the base {span.label}",
                   expected="a positive index level in the base period",
                   found=f"{means[j]:g}", series=names[j], period=span.label,
                   fix="Check the index values; a price index must be positive.")
    return means


def rebase(index: Series, base: str | Span | pd.Period, *, fy_start: int | None = None) -> Series:
    """The index rebased so that the mean over ``base`` is 100.

    ``base`` is any label the intake accepts (FY labels read with the index's fiscal
    start month, or ``fy_start``), a range ``START..END`` or a Span. The result's ``reference`` is the
    base label and its status the worst of each value's own and the base values'.
    """
    _require_index(index)
    check_index(index)
    span = as_span(base, index.frequency, fy_start)
    vals = index.values.to_numpy(dtype=float)
    mean = base_means(vals, index.index, index.frequency, span, (index.name,))[0]
    new = pd.Series(100.0 * vals / mean, index=index.index, name=index.values.name)
    status = _with_base_status(index, span)
    return index.with_values(new, reference=span.label, status=status,
                             notes=(*index.notes, f"rebased: {span.label} = 100"))


def _require_index(s: Series) -> None:
    if s.kind != "index":
        raise fail(IX006, f"{s.name!r} is a {s.kind}, not a price index",
                   expected="an index series", found=s.kind, series=s.name,
                   fix="Mark the series as an index (kind 'index') or pick another series.")


def _with_base_status(index: Series, span: Span) -> pd.Series | None:
    if index.status is None:
        return None
    ranks = status_ranks(index)
    pos = base_positions(index.index, index.frequency, span)
    base_rank = int(ranks[pos[pos >= 0]].max()) if (pos >= 0).any() else 0
    return pd.Series(ranks_to_status(np.maximum(ranks, base_rank)), index=index.index,
                     dtype=object)


@dataclass(frozen=True)
class Linked:
    """Two index segments joined at an overlap.

    ``series``: the linked index (old segment before the overlap, the new one scaled by
    ``factor`` from the overlap on); ``factor`` = I_old(o) / I_new(o); ``overlap``: the
    overlap label (one period, or a span whose averages were used).
    """

    series: Series
    factor: float
    overlap: str
    method: str
    warnings: tuple[Problem, ...] = ()


def _default_overlap(old: Series, new: Series, annual: bool) -> Span:
    both = old.values.dropna().index.intersection(new.values.dropna().index)
    freq = old.frequency
    if len(both) == 0:
        raise fail(IX004, f"indexes {old.name!r} and {new.name!r} share no period",
                   expected="at least one period (or one whole year) with values in both",
                   found=f"{old.name}: {_range(old)}; {new.name}: {_range(new)}",
                   fix="Supply an overlapping period for both segments.")
    if not annual:
        return Span.of(both.max(), freq)
    year = Frequency("FY", freq.fy_start) if freq.is_fiscal else ANNUAL
    years = both.asfreq(year.pandas_freq, how="end")
    counts = pd.Series(1, index=years).groupby(level=0).sum()
    need = year.months_per_period // freq.months_per_period
    whole = counts[counts == need]
    if whole.empty:
        raise fail(IX004, f"indexes {old.name!r} and {new.name!r} share no whole year",
                   expected=f"a {year.describe()} period with every value in both",
                   found=f"common periods {freq.label(both.min())} to {freq.label(both.max())}",
                   fix="Link at a single overlap period instead (annual=False), or supply "
                   "a full overlapping year.")
    return Span.of(whole.index.max(), year)


def _range(s: Series) -> str:
    v = s.values.dropna()
    if v.empty:
        return "no values"
    return f"{s.frequency.label(v.index.min())} to {s.frequency.label(v.index.max())}"


def link(old: Series, new: Series, overlap: str | Span | None = None,
         annual: bool = False, *, fy_start: int | None = None) -> Linked:
    """Join ``old`` and ``new`` index segments at ``overlap``.

    ``overlap`` None picks the latest common period, or with ``annual=True`` the latest
    common whole (calendar or, for fiscal data, fiscal) year, whose averages are used.
    The link factor I_old(o)/I_new(o) is reported. The linked series keeps the old name.
    """
    for s in (old, new):
        _require_index(s)
        check_index(s)
    if old.frequency != new.frequency:
        raise fail(IX003, f"cannot link {old.name!r} ({old.frequency.describe()}) with "
                   f"{new.name!r} ({new.frequency.describe()})",
                   expected="two segments of the same frequency",
                   found=f"{old.frequency.describe()} and {new.frequency.describe()}",
                   fix="Convert one segment to the other's frequency first.")
    freq = old.frequency
    span = _default_overlap(old, new, annual) if overlap is None else as_span(overlap, freq, fy_start)
    periods = span.periods_in(freq)
    o_old = old.values.reindex(periods)
    o_new = new.values.reindex(periods)
    gaps = periods[np.asarray(o_old.isna() | o_new.isna())]
    if len(gaps):
        raise fail(IX005, f"overlap {span.label} is not covered by both segments",
                   expected=f"values of {old.name!r} and {new.name!r} in every period of "
                   f"{span.describe()}", found=f"missing {describe_ranges(freq.labels(gaps))}",
                   period=span.label, fix="Choose an overlap both segments cover.")
    m_old, m_new = float(o_old.mean()), float(o_new.mean())
    if not (m_old > 0 and m_new > 0):
        raise fail(IX007, f"overlap {span.label} has a non-positive index level",
                   expected="positive index values", found=f"{m_old:g} and {m_new:g}",
                   period=span.label, fix="Check the index values.")
    factor = m_old / m_new
    start = periods[0]
    before = old.values[old.index < start]
    after = new.values[new.index >= start] * factor
    values = pd.concat([before, after]).sort_index()
    values.name = old.values.name
    values.index = pd.PeriodIndex(values.index, freq=freq.pandas_freq)
    status = None
    if old.status is not None or new.status is not None:
        r_old = pd.Series(status_ranks(old), index=old.index)
        r_new = pd.Series(status_ranks(new), index=new.index)
        o_rank = int(max(r_old.reindex(periods).max(), r_new.reindex(periods).max()))
        ranks = np.concatenate([
            r_old[r_old.index < start].to_numpy(),
            np.maximum(r_new[r_new.index >= start].to_numpy(), o_rank),
        ])
        status = pd.Series(ranks_to_status(ranks), index=values.index, dtype=object)
    warnings: list[Problem] = []
    dropped = old.values[(old.index >= start)].dropna()
    if len(dropped) > len(periods):
        warnings.append(warn(
            IX004, f"{len(dropped) - len(periods)} later value(s) of {old.name!r} replaced by "
            f"the linked {new.name!r}", expected="the new segment from the overlap on",
            found=f"old segment runs to {_range(old).split(' to ')[-1]}",
            fix="Nothing to do if the new segment is meant to supersede the old.",
            series=old.name))
    method = (f"{new.name!r} linked to {old.name!r} at {span.describe()}: from "
              f"{freq.label(start)} on, I(t) = I_new(t) x {factor:.6g} "
              f"(= I_old / I_new over the overlap); earlier values from {old.name!r}")
    linked = old.with_values(values, status=status,
                             notes=(*old.notes, f"linked to {new.name} at {span.label}"))
    return Linked(linked, factor, span.label, method, tuple(warnings))
