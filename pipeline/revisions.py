"""Index vintages, value status, and how revisions move real results.

A price index can be loaded several times, each load with an as-of date (its vintage,
``Series.vintage``). Every value is final, preliminary or projected: from a status column
in the file (the intake reads it) or from a rule such as "the last N values are
preliminary" (:func:`apply_status_rule`). Chained consumer indexes are first issued as
preliminary values and revised until final roughly a year later (common practice).

:func:`compare_vintages` lists the value revisions between two vintages of one index;
:func:`revision_impact` deflates the same nominal series with both vintages (through
:func:`pipeline.deflate.deflate`, so alignment and base handling are the engine's) and
reports how every real figure and every growth rate moved.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from . import growth
from .deflate import DeflationResult, deflate
from .errors import Problem, fail, register, warn
from .indexes import rebase
from .model import STATUS_RANK, Frequency, Kind, Series
from .periods import Span

WS301 = register("WS301", "vintages cannot be compared")
WS302 = register("WS302", "status rule invalid")
WS303 = register("WS303", "vintages have different reference periods")
WS304 = register("WS304", "periods outside the span both vintages cover left out")
WS305 = register("WS305", "two loads of an index share one vintage")


# ---------------------------------------------------------------------------------------
# Vintages and status


def vintages(loads: Sequence[Series]) -> dict[str, dict[str, Series]]:
    """Group loaded indexes by name, then by vintage (as-of date, ISO; '' when unknown),
    vintages in date order - the shape of ``Workspace.indexes``. Two loads of one index
    with the same vintage raise WS305."""
    out: dict[str, dict[str, Series]] = {}
    for s in loads:
        v = s.vintage or ""
        slot = out.setdefault(s.name, {})
        if v in slot:
            raise fail(WS305, f"index {s.name!r} loaded twice as of {v or '(no date)'}",
                       expected="one load per index and as-of date",
                       found=f"two loads as of {v or '(no date)'}", series=s.name,
                       fix="Give each load its as-of date (a vintage column in the "
                       "file, or the as-of date of the load).", remedy="as_of")
        slot[v] = s
    return {n: dict(sorted(vs.items())) for n, vs in out.items()}


def apply_status_rule(index: Series, *, last_preliminary: int,
                      as_of: str | None = None) -> Series:
    """Mark the last ``last_preliminary`` values (periods with a value) preliminary.

    Projected values stay projected and already preliminary ones stay so; the rule only
    upgrades final values. ``as_of`` sets the vintage (ISO date) when given.
    """
    if last_preliminary < 0:
        raise fail(WS302, "the number of preliminary periods cannot be negative",
                   expected="0 or more", found=str(last_preliminary), series=index.name,
                   fix="Give how many of the latest values are preliminary.")
    status = index.status_or_final().astype(object).copy()
    present = index.values.notna().to_numpy() & (status != "projected").to_numpy()
    pos = np.flatnonzero(present)
    if last_preliminary:
        tail = pos[-last_preliminary:]
        status.iloc[tail] = np.where(status.iloc[tail] == "final", "preliminary",
                                     status.iloc[tail])
    changes: dict[str, object] = {"status": status}
    if as_of is not None:
        changes["vintage"] = as_of
    return index.with_values(index.values, **changes)


# ---------------------------------------------------------------------------------------
# Value revisions


@dataclass(frozen=True)
class VintageComparison:
    """Value revisions of one index between two vintages.

    ``table``: ``period, old, new, revision, revision_pct, old_status, new_status`` over
    the union of periods (old or new NaN where a vintage lacks the period). ``revised``:
    number of periods whose value changed by more than the tolerance.
    """

    name: str
    old_vintage: str
    new_vintage: str
    table: pd.DataFrame
    revised: int
    added: int
    removed: int
    finalised: int
    largest: tuple[str, float] | None
    rebased_to: str | None = None
    warnings: tuple[Problem, ...] = ()

    def method_note(self) -> tuple[str, ...]:
        notes = [
            f"{self.name}: vintage {self.new_vintage or '(undated)'} compared with "
            f"{self.old_vintage or '(undated)'}; revision = new - old, in index points "
            "and in percent of the old value.",
            f"{self.revised} value(s) revised, {self.added} added, {self.removed} no longer "
            f"published, {self.finalised} turned from preliminary to final.",
        ]
        if self.largest is not None:
            notes.append(f"Largest revision: {self.largest[1]:+.3f} points in {self.largest[0]}.")
        if self.rebased_to:
            notes.append(f"Both vintages rebased to {self.rebased_to} = 100 before comparing.")
        return tuple(notes)


def _status_where_present(s: Series, idx: pd.PeriodIndex, values: pd.Series) -> np.ndarray:
    st = s.status_or_final().reindex(idx).to_numpy(dtype=object)
    return np.where(values.isna().to_numpy(), "", st).astype(object)


def compare_vintages(old: Series, new: Series, *, rebase_to: str | Span | None = None,
                     tolerance: float = 1e-9, fy_start: int | None = None
                     ) -> VintageComparison:
    """Value revisions from ``old`` to ``new`` (two vintages of one index).

    Vintages stated on different reference periods are not comparable value by value:
    give ``rebase_to`` (both are rebased with :func:`pipeline.indexes.rebase`; fiscal
    labels such as FY2025 read with ``fy_start``, the workspace's fiscal year), otherwise
    a WS303 warning is attached.
    """
    if old.frequency != new.frequency:
        raise fail(WS301, "the two vintages have different frequencies",
                   expected="two loads of the same index",
                   found=f"{old.frequency.describe()} and {new.frequency.describe()}",
                   series=new.name, fix="Compare vintages of the same index and frequency.")
    warnings: list[Problem] = []
    if rebase_to is not None:
        old, new = (rebase(old, rebase_to, fy_start=fy_start),
                    rebase(new, rebase_to, fy_start=fy_start))
    elif old.reference and new.reference and old.reference != new.reference:
        warnings.append(warn(WS303, "the vintages are stated on different reference periods",
                             found=f"{old.reference} and {new.reference}", series=new.name,
                             fix="Rebase both to one period before comparing.",
                             remedy="rebase_vintages"))
    freq = old.frequency
    idx = old.index.union(new.index)
    o = old.values.reindex(idx)
    n = new.values.reindex(idx)
    rev = n - o
    table = pd.DataFrame({
        "period": freq.labels(idx),
        "old": o.to_numpy(),
        "new": n.to_numpy(),
        "revision": rev.to_numpy(),
        "revision_pct": (100.0 * rev / o).to_numpy(),
        "old_status": _status_where_present(old, idx, o),
        "new_status": _status_where_present(new, idx, n),
    })
    both = o.notna() & n.notna()
    changed = both & (rev.abs() > tolerance)
    largest = None
    if changed.any():
        k = int(np.nanargmax(np.where(changed, rev.abs(), -1.0)))
        largest = (freq.label(idx[k]), float(rev.iloc[k]))
    finalised = int(((table["old_status"] == "preliminary") & (table["new_status"] == "final")).sum())
    return VintageComparison(
        name=new.name, old_vintage=old.vintage or "", new_vintage=new.vintage or "",
        table=table, revised=int(changed.sum()), added=int((o.isna() & n.notna()).sum()),
        removed=int((o.notna() & n.isna()).sum()), finalised=finalised, largest=largest,
        rebased_to=None if rebase_to is None else str(getattr(rebase_to, "label", rebase_to)),
        warnings=tuple(warnings),
    )


# ---------------------------------------------------------------------------------------
# Impact on real results


@dataclass(frozen=True, eq=False)
class RevisionImpact:
    """How real figures and growth rates move from the old to the new index vintage.

    ``table`` columns: ``series, period, nominal, real_old, real_new, real_change,
    real_change_pct, growth_old_pct, growth_new_pct, growth_change_pp, yoy_old_pct,
    yoy_new_pct, yoy_change_pp, status_old, status_new`` (growth: period on period;
    yoy: year on year; percentages and percentage points). ``summary``: one row per
    series with the compound annual real growth under each vintage and its change.
    """

    base: str
    frequency: Frequency
    table: pd.DataFrame
    summary: pd.DataFrame
    old: DeflationResult
    new: DeflationResult
    warnings: tuple[Problem, ...] = ()

    def method_note(self) -> tuple[str, ...]:
        return (
            f"Every series deflated twice to constant {self.base} dollars, once with each "
            "vintage of the index, by the same method:",
            *self.new.method_note(),
            "real_change = real(new vintage) - real(old vintage); growth changes are in "
            "percentage points.",
        )


def _covered_months(s: Series) -> tuple[int, int]:
    v = s.values.dropna()
    first = v.index[0].asfreq("M", how="start").ordinal
    last = v.index[-1].asfreq("M", how="end").ordinal
    return int(first), int(last)


def _trim(s: Series, first_month: int, last_month: int) -> Series:
    starts = np.asarray(s.index.asfreq("M", how="start").asi8)
    ends = np.asarray(s.index.asfreq("M", how="end").asi8)
    keep = (starts >= first_month) & (ends <= last_month)
    vals = s.values[keep]
    status = None if s.status is None else s.status.reindex(vals.index)
    return s.with_values(vals, status=status)


def revision_impact(series: Sequence[Series], old: Series, new: Series,
                    base: str | Span | pd.Period, *, to: Frequency | None = None,
                    kind: Kind | None = None, fy_start: int | None = None,
                    interpolate: bool | str = False) -> RevisionImpact:
    """Deflate ``series`` with both vintages and report how every real value and growth
    rate moved. Periods outside the span both vintages cover are left out (WS304)."""
    if not series:
        raise fail(WS301, "no series to deflate", expected="one or more money series",
                   found="none", fix="Give the nominal series whose real values to compare.")
    (o1, o2), (n1, n2) = _covered_months(old), _covered_months(new)
    first, last = max(o1, n1), min(o2, n2)
    if first > last:
        raise fail(WS301, "the two vintages share no period", expected="overlapping vintages",
                   found="disjoint spans", series=new.name, fix="Check the files.")
    warnings: list[Problem] = []
    trimmed = []
    for s in series:
        t = _trim(s, first, last)
        dropped = int(s.values.notna().sum() - t.values.notna().sum())
        if dropped:
            warnings.append(warn(
                WS304, f"{dropped} period(s) of {s.name!r} outside the span both vintages "
                "cover were left out",
                found=f"common span {pd.Period(ordinal=first, freq='M')} to "
                f"{pd.Period(ordinal=last, freq='M')}", series=s.name,
                fix="Project or extend the older vintage to compare those periods."))
        if t.values.notna().any():
            trimmed.append(t)
    if not trimmed:
        raise fail(WS301, "no series period falls in the span both vintages cover",
                   expected="series periods inside both vintages", found="none",
                   fix="Check the periods of the series and of the index vintages.")
    kw = {"to": to, "kind": kind, "fy_start": fy_start, "interpolate": interpolate}
    r_old = deflate(trimmed, [old], base, **kw)  # type: ignore[arg-type]
    r_new = deflate(trimmed, [new], base, **kw)  # type: ignore[arg-type]
    freq = r_new.frequency
    real_o, real_n = r_old.real_frame(0), r_new.real_frame(0)
    real_o = real_o.reindex(real_n.index)
    nominal = r_new.nominal_frame()
    pop_o = growth.period_on_period(real_o, freq).values * 100
    pop_n = growth.period_on_period(real_n, freq).values * 100
    yoy_o = growth.year_on_year(real_o, freq).values * 100
    yoy_n = growth.year_on_year(real_n, freq).values * 100
    st_o = r_old.status_frame(0).reindex(real_n.index)
    st_n = r_new.status_frame(0)
    parts = []
    labels = np.array(freq.labels(real_n.index), dtype=object)
    for name in r_new.series_names:
        present = nominal[name].notna().to_numpy()
        parts.append(pd.DataFrame({
            "series": name,
            "period": labels[present],
            "nominal": nominal[name].to_numpy()[present],
            "real_old": real_o[name].to_numpy()[present],
            "real_new": real_n[name].to_numpy()[present],
            "growth_old_pct": pop_o[name].to_numpy()[present],
            "growth_new_pct": pop_n[name].to_numpy()[present],
            "yoy_old_pct": yoy_o[name].to_numpy()[present],
            "yoy_new_pct": yoy_n[name].to_numpy()[present],
            "status_old": st_o[name].to_numpy()[present],
            "status_new": st_n[name].to_numpy()[present],
        }))
    table = pd.concat(parts, ignore_index=True)
    table.insert(5, "real_change", table["real_new"] - table["real_old"])
    table.insert(6, "real_change_pct", 100 * table["real_change"] / table["real_old"])
    table.insert(9, "growth_change_pp", table["growth_new_pct"] - table["growth_old_pct"])
    table["yoy_change_pp"] = table["yoy_new_pct"] - table["yoy_old_pct"]
    cols = ["series", "period", "nominal", "real_old", "real_new", "real_change",
            "real_change_pct", "growth_old_pct", "growth_new_pct", "growth_change_pp",
            "yoy_old_pct", "yoy_new_pct", "yoy_change_pp", "status_old", "status_new"]
    table = table[cols]
    rows = []
    for name in r_new.series_names:
        ro, rn = real_o[name].dropna(), real_n[name].dropna()
        if len(rn) < 2:
            continue
        a, b = rn.index[0], rn.index[-1]
        g_o = growth.cagr(ro, a, b, freq)
        g_n = growth.cagr(rn, a, b, freq)
        rows.append({"series": name, "from": freq.label(a), "to": freq.label(b),
                     "real_cagr_old_pct": g_o.percent, "real_cagr_new_pct": g_n.percent,  # type: ignore[union-attr]
                     "change_pp": g_n.percent - g_o.percent,  # type: ignore[union-attr]
                     "values_moved": int((table.loc[table.series == name, "real_change"]
                                          .abs() > 1e-9).sum()),
                     "worst_status_new": max(table.loc[table.series == name, "status_new"],
                                             key=lambda s: STATUS_RANK.get(s, 0))})
    summary = pd.DataFrame(rows)
    return RevisionImpact(r_new.base_label, freq, table, summary, r_old, r_new,
                          tuple(warnings) + r_old.warnings + r_new.warnings)
