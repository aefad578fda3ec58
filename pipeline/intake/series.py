"""Stage 6, series: one :class:`~pipeline.model.Series` per series (per vintage in long
files), each checked: mixed frequencies, duplicate periods, dates finer than months,
gaps, missing values inside the series, units, kinds (:mod:`pipeline.intake.kinds`),
index values above zero, statuses (markers and status columns).

Two assemblies share the rules: :func:`assemble` for the long table of cells (long,
SDMX-CSV, periods across the header) and :func:`assemble_wide` for a wide table kept as
columns (one period column shared by every series), which works on the whole
rows x series array at once."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .. import labels
from ..errors import Location, Problem, fail
from ..model import STATUS_RANK, STATUSES, Frequency, Kind, Series
from . import kinds as kind_rules
from .codes import IN012, IN013, IN014, IN015, IN020, IN022, IN024, IN031, IN032
from .layout import REFERENCE, Cells, WideCells
from .periods import Periods
from .problems import Problems, cell_problems, clip, grid_problems
from .values import Values

FKEYS = ("M", "Q", "A", "FY", "FQ")  # frequency keys of pipeline.labels
_RANK = np.array([STATUS_RANK[s] for s in STATUSES])


@dataclass(frozen=True)
class Options:
    """How to read the series: ``kinds`` given by name, the file's role (``default_kind``:
    'flow'/'stock' for money, 'index' for price indexes, None to guess), and whether dates
    finer than months are aggregated to months (``daily``)."""

    kinds: Mapping[str, Kind] = field(default_factory=dict)
    default_kind: Kind | None = None
    daily: bool = False


@dataclass
class Facts:
    """What assembly did, for the reading note."""

    missing_cells: int = 0
    outside_cells: int = 0  # blank cells before the first or after the last value
    daily_rows: int = 0
    days_per_month: tuple[int, int] = (0, 0)
    kinds: dict[str, int] = field(default_factory=dict)  # how decided -> count


def _how(note: str) -> str:
    if "given by the user" in note:
        return "given"
    if "from the unit" in note:
        return "from the unit"
    if "file's role" in note:
        return "from the file's role"
    return "guessed"


# --- shared rules ------------------------------------------------------------------------

def _targets(parsed: labels.ParsedColumn, sel: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(frequency key code, ordinal at that frequency) of the cells ``sel``."""
    keys_all = parsed.keys[sel]
    keys = np.full(len(sel), -1, dtype=np.int8)
    for code, key in enumerate(FKEYS):
        keys[keys_all == key] = code
    ords = parsed.ordinals[sel]
    kinds_sel = parsed.kinds[sel]
    freq_key = keys.copy()
    target = np.zeros(len(sel), dtype=np.int64)
    for key in np.unique(keys):
        m = keys == key
        k2 = key
        if FKEYS[key] == "M" and bool((kinds_sel[m] == labels.DATE).all()):
            days = parsed.days[sel][m] if parsed.days is not None else None
            # dates finer than months never make quarters or years
            if days is None or len(np.unique(ords[m] * 32 + days)) == len(np.unique(ords[m])):
                k2 = FKEYS.index(labels.date_frequency(ords[m], parsed.fy_start))
            freq_key[m] = k2
        target[m] = labels.to_periods(ords[m], FKEYS[k2], parsed.fy_start).asi8
    return freq_key, target


def _day_codes(parsed: labels.ParsedColumn, sel: np.ndarray) -> np.ndarray:
    """A day-level key of each cell (month ordinal x 32 + day; day 0 without one)."""
    days = parsed.days[sel] if parsed.days is not None else np.zeros(len(sel), dtype=np.int64)
    return parsed.ordinals[sel] * 32 + days


def _refuse_daily(text: np.ndarray, rows: np.ndarray, n_rows: int, file: str,
                  sheet: str | None, column: str) -> None:
    raise fail(IN031, "the dates are finer than months: several dates fall in one month",
               expected="one value per month (or quarter, or year) in each series",
               found=f"dates such as {', '.join(repr(clip(t, 30)) for t in text[:3])} in one "
                     f"month ({n_rows:,} dated rows in all)",
               fix="Give monthly values, or ask for the dates to be aggregated to months "
                   "(flows summed, stocks at the month's last date, indexes averaged).",
               file=file, sheet=sheet, row=int(rows[0]), column=clip(column))


def _to_months(o: np.ndarray, v: np.ndarray, ranks: np.ndarray | None,
               kind: Kind) -> tuple[np.ndarray, np.ndarray, np.ndarray | None, np.ndarray]:
    """Daily cells (sorted by date, ``o`` their month) to one value per month: flows
    summed, stocks the last value present, indexes averaged; the worst status. Returns
    (months, values, ranks, days counted per month)."""
    months, start = np.unique(o, return_index=True)
    present = np.isfinite(v)
    count = np.add.reduceat(present.astype(np.int64), start)
    vz = np.where(present, v, 0.0)
    if kind == "flow":
        out = np.add.reduceat(vz, start)
    elif kind == "index":
        out = np.add.reduceat(vz, start) / np.maximum(count, 1)
    else:  # stock: last value present in the month
        pos = np.where(present, np.arange(len(v)), -1)
        last = np.maximum.reduceat(pos, start)
        out = np.where(last >= 0, v[np.maximum(last, 0)], np.nan)
    out = np.where(count > 0, out, np.nan)
    r = np.maximum.reduceat(ranks, start) if ranks is not None else None
    return months, out, r, count


def _statuses(marker: np.ndarray | None, column: np.ndarray | None) -> np.ndarray | None:
    """Per cell status rank (0 final, 1 preliminary, 2 projected): the marker where there
    is one, else the status column; None when neither says anything."""
    if marker is None and column is None:
        return None
    n = len(marker) if marker is not None else len(column)  # type: ignore[arg-type]
    st = np.full(n, "final", dtype=object)
    if column is not None:
        st = column.astype(object)
    if marker is not None:
        st = np.where(marker != "", marker, st)
    ranks = np.zeros(n, dtype=np.int8)
    for s, r in STATUS_RANK.items():
        ranks[st == s] = r
    return ranks


def _status_series(ranks: np.ndarray | None, pidx: pd.PeriodIndex) -> pd.Series | None:
    if ranks is None or not (ranks > 0).any():
        return None
    return pd.Series(np.asarray(STATUSES, dtype=object)[ranks], index=pidx, dtype=object)


def _period_index(lo: int, hi: int, freq: Frequency) -> pd.PeriodIndex:
    return pd.PeriodIndex(pd.arrays.PeriodArray(np.arange(lo, hi + 1, dtype=np.int64),
                                                dtype=pd.PeriodDtype(freq.pandas_freq)))


def _unused_kinds(kinds: Mapping[str, Kind], used: set[str], out: list[Series], sink: Problems,
                  file: str, sheet: str | None) -> None:
    missing_kinds = sorted(set(kinds) - used)
    if missing_kinds:
        sink.add(Problem(IN022, "kinds were given for series not in the file",
                         "names of series in the file: " + ", ".join(clip(s.name) for s in out[:10]),
                         ", ".join(clip(k) for k in missing_kinds[:20]),
                         "Check the spelling of the series names.",
                         Location(file=file, sheet=sheet), "warning"))


def _gap_problem(gaps: np.ndarray, lo: int, pidx: pd.PeriodIndex, freq: Frequency, name: str,
                 sheet: str | None, series: str | None, what: str = "the series") -> Problem:
    gl = freq.labels(pidx[gaps[:5] - lo])
    return Problem(
        IN013, f"{len(gaps)} period(s) missing inside {what}", "one row per period from first to last",
        "missing " + ", ".join(gl) + (" ..." if len(gaps) > 5 else ""),
        "Add the missing periods (blank values are fine) or check the period labels.",
        Location(file=name, sheet=sheet, series=None if series is None else clip(series),
                 period=gl[0]), "warning")


_MISSING_EXPECTED = "a value in every period from the series' first value to its last"
_MISSING_FIX = ("Fill in the value if it exists; otherwise nothing to do: the period stays "
                "empty and is shown as missing, never bridged.")


def rows_to_read(cells: Cells, series_text: pd.Series, period_text: pd.Series,
                 missing: np.ndarray, sink: Problems, *, file: str,
                 sheet: str | None) -> np.ndarray:
    """Cells that carry something: not (blank period and missing value), and with a
    series name (IN020 otherwise)."""
    empty = (period_text == "").to_numpy() & missing
    keep = ~empty
    no_name = (series_text == "").to_numpy() & keep
    cell_problems(sink, IN020, "a row has values but no series name", no_name, rows=cells.row,
                  columns=cells.series_column or "", series=series_text.to_numpy(dtype=object),
                  found=cells.series.to_numpy(dtype=object), expected="the series name",
                  fix="Fill in the series name.", file=file, sheet=sheet)
    return keep & ~no_name


# --- the long table --------------------------------------------------------------------

def assemble(cells: Cells, per: Periods, series_text: pd.Series, vals: Values,
             marker: np.ndarray | None, status: np.ndarray | None, vintage: np.ndarray | None,
             keep: np.ndarray, opts: Options, sink: Problems, *, file: str,
             sheet: str | None) -> tuple[list[Series], Facts]:
    """One Series per (name, vintage) over the cells in ``keep``."""
    name = file
    facts = Facts()
    parsed = per.parsed
    sel = np.flatnonzero(keep)
    sname = series_text.to_numpy(dtype=object)[sel]
    vint = vintage[sel] if vintage is not None else np.full(len(sel), "", dtype=object)
    gkey = pd.MultiIndex.from_arrays([sname, vint]) if vintage is not None else pd.Index(sname)
    gcodes, guniq = pd.factorize(gkey, sort=False)
    freq_key, target_ord = _targets(parsed, sel)
    ranks_all = _statuses(marker, status)
    frame = pd.DataFrame({"g": gcodes, "f": freq_key, "o": target_ord, "d": _day_codes(parsed, sel),
                          "v": vals.numbers[sel], "r": cells.row[sel], "i": np.arange(len(sel))})
    # mixed frequencies inside one series
    grouped = frame.groupby("g", sort=False)["f"]
    spread = grouped.max() - grouped.min()
    mixed = set(spread.index[spread.to_numpy() > 0].tolist())
    for g in sorted(mixed):
        sub = frame[frame["g"] == g]
        counts = sub["f"].value_counts()
        minority = counts.index[-1]
        first = sub[sub["f"] == minority].iloc[0]
        gname = guniq[g] if vintage is None else guniq[g][0]
        sink.add(Problem(
            IN014, "the series mixes frequencies", "one frequency per series",
            "; ".join(f"{labels.FREQ_WORDS[FKEYS[k]]}: {c} rows" for k, c in counts.items()),
            "Remove total or subtotal rows, or give each frequency its own series.",
            Location(file=name, sheet=sheet, row=int(first["r"]),
                     column=clip(cells.period_column[sel[int(first["i"])]]),
                     series=clip(gname))))
    if mixed:
        frame = frame[~frame["g"].isin(mixed)]

    # dates finer than months: several distinct dates in one month of one series
    has_days = parsed.days is not None and bool((parsed.days[sel] > 0).any())
    same_month = (frame.duplicated(["g", "o"], keep=False).to_numpy() if has_days
                  else np.zeros(len(frame), dtype=bool))
    if same_month.any():
        distinct = ~frame.duplicated(["g", "o", "d"], keep="first").to_numpy()
        fine = frame.duplicated(["g", "o"], keep="first").to_numpy() & distinct
        if fine.any():
            first_fine = frame.loc[fine, ["g", "o"]].iloc[0]
            in_month = ((frame["g"] == first_fine["g"]) & (frame["o"] == first_fine["o"])).to_numpy()
            i_fine = frame["i"].to_numpy()[in_month]
            if not opts.daily:
                _refuse_daily(per.text.to_numpy(dtype=object)[sel[i_fine[:3]]],
                              cells.row[sel[i_fine[:1]]], len(frame), name, sheet,
                              str(cells.period_column[0]))
            facts.daily_rows = len(frame)
    daily = facts.daily_rows > 0

    # duplicate periods (the same date twice, when days are aggregated)
    dup = frame.duplicated(["g", "d"] if daily else ["g", "o"], keep="first").to_numpy()
    if dup.any():
        dmask = np.zeros(len(cells.row), dtype=bool)
        dmask[sel[frame["i"].to_numpy()[dup]]] = True
        cell_problems(sink, IN012, "the period appears twice in this series", dmask,
                      rows=cells.row, columns=cells.period_column,
                      series=series_text.to_numpy(dtype=object),
                      found=per.text.to_numpy(dtype=object), expected="each period once per series",
                      fix="Delete or merge the repeated row (the first one is kept).",
                      file=name, sheet=sheet, per_row=cells.headers is not None)
        frame = frame[~dup]

    frame = frame.sort_values(["g", "o", "d"], kind="stable")
    gcol = frame["g"].to_numpy()
    starts = np.flatnonzero(np.r_[True, gcol[1:] != gcol[:-1]]) if len(gcol) else np.array([], int)
    ends = np.r_[starts[1:], len(gcol)] if len(gcol) else np.array([], int)
    out: list[Series] = []
    given = dict(opts.kinds)
    used_kinds: set[str] = set()
    o_all = frame["o"].to_numpy()
    v_all = frame["v"].to_numpy()
    i_all = frame["i"].to_numpy()
    f_all = frame["f"].to_numpy()
    nonpos_mask = np.zeros(len(cells.row), dtype=bool)
    missing_mask = np.zeros(len(cells.row), dtype=bool)
    miss_sel = vals.missing[sel]
    unit_all = cells.unit.to_numpy(dtype=object) if cells.unit is not None else None
    days_min, days_max = 10**9, 0
    for a, b in zip(starts.tolist(), ends.tolist(), strict=True):
        g = int(gcol[a])
        gname = str(guniq[g] if vintage is None else guniq[g][0])
        gvint = None if vintage is None else (str(guniq[g][1]) or None)
        key = FKEYS[int(f_all[a])]
        freq: Frequency = labels.frequency_of(key, parsed.fy_start)
        o = o_all[a:b]
        v = v_all[a:b]
        ii = i_all[a:b]
        # unit
        unit: str | None = None
        if cells.units is not None:
            unit = cells.units.get(gname)
        if unit_all is not None:
            us = unit_all[sel[ii]]
            us = [u for u in pd.unique(us) if u]
            if us:
                unit = str(us[0])
            if len(us) > 1:
                sink.add(Problem(IN024, "the series has more than one unit",
                                 "one unit per series", ", ".join(clip(u) for u in us[:5]),
                                 f"Check the unit column; {clip(us[0])!r} is used.",
                                 Location(file=name, sheet=sheet, series=clip(gname)), "warning"))
        header = (cells.headers or {}).get(gname, gname)
        reference = (cells.references or {}).get(gname)
        if reference is None and unit:
            ref = REFERENCE.search(unit)
            reference = ref.group("ref").strip() if ref else None
        finite = v[np.isfinite(v)]
        kind, why = kind_rules.decide(
            gname, header, unit, given.get(gname), opts.default_kind,
            float(finite.min()) if len(finite) else np.nan,
            float(finite.max()) if len(finite) else np.nan,
            bool(np.isclose(finite, 100.0).any()) if len(finite) else False)
        if gname in given:
            used_kinds.add(gname)
        facts.kinds[_how(why)] = facts.kinds.get(_how(why), 0) + 1
        if kind == "index":
            bad = np.isfinite(v) & (v <= 0)
            if bad.any():
                nonpos_mask[sel[ii[bad]]] = True
        # missing values inside the series: between its first and last value
        fin = np.flatnonzero(np.isfinite(v))
        m = miss_sel[ii]
        if len(fin):
            inside = m.copy()
            inside[: fin[0]] = False
            inside[fin[-1] + 1:] = False
            missing_mask[sel[ii[inside]]] = True
            facts.outside_cells += int(m.sum() - inside.sum())
        ranks = ranks_all[sel[ii]] if ranks_all is not None else None
        if daily:
            o, v, ranks, count = _to_months(o, v, ranks, kind)
            if len(count):
                days_min, days_max = min(days_min, int(count.min())), max(days_max, int(count.max()))
        lo, hi = int(o[0]), int(o[-1])
        full = np.full(hi - lo + 1, np.nan)
        full[o - lo] = v
        pidx = _period_index(lo, hi, freq)
        values = pd.Series(full, index=pidx, name=gname)
        st_series = None
        if ranks is not None:
            r_full = np.zeros(hi - lo + 1, dtype=np.int8)
            r_full[o - lo] = ranks
            st_series = _status_series(r_full, pidx)
        if len(o) < hi - lo + 1:
            present = np.zeros(hi - lo + 1, dtype=bool)
            present[o - lo] = True
            sink.add(_gap_problem(np.flatnonzero(~present) + lo, lo, pidx, freq, name, sheet, gname))
        out.append(Series(name=gname, values=values, frequency=freq, kind=kind, unit=unit,
                          status=st_series, source=name, vintage=gvint, reference=reference,
                          notes=(why,)))
    if daily:
        facts.days_per_month = (days_min if days_max else 0, days_max)
    facts.missing_cells = cell_problems(
        sink, IN032, "a value is missing", missing_mask, rows=cells.row, columns=cells.column,
        series=series_text.to_numpy(dtype=object), found=vals.text.to_numpy(dtype=object),
        periods=per.text.to_numpy(dtype=object), expected=_MISSING_EXPECTED, fix=_MISSING_FIX,
        file=name, sheet=sheet, severity="warning")
    cell_problems(sink, IN015, "an index value must be above zero", nonpos_mask, rows=cells.row,
                  columns=cells.column, series=series_text.to_numpy(dtype=object),
                  found=vals.text.to_numpy(dtype=object),
                  expected="a positive index level (e.g. 100 in the reference period)",
                  fix="Correct the value; if this is not an index, say the kind is flow or stock.",
                  remedy_key="series_kind", file=name, sheet=sheet)
    _unused_kinds(given, used_kinds, out, sink, name, sheet)
    return out, facts


# --- the wide table, column-wise --------------------------------------------------------

def assemble_wide(w: WideCells, per: Periods, numbers: np.ndarray, missing: np.ndarray,
                  bad: np.ndarray, text: np.ndarray, marker: np.ndarray | None,
                  status_rows: np.ndarray | None, row_ok: np.ndarray, opts: Options,
                  sink: Problems, *, file: str, sheet: str | None) -> tuple[list[Series], Facts]:
    """Series of a wide table: ``numbers``, ``missing``, ``bad``, ``text`` and ``marker``
    are (rows x series) arrays; ``status_rows`` the status column's status per row;
    ``row_ok`` the rows whose period parsed."""
    name = file
    facts = Facts()
    parsed = per.parsed
    n, k = numbers.shape
    sel = np.flatnonzero(row_ok)
    freq_key, target = _targets(parsed, sel)
    if len(sel) == 0:
        return [], facts
    key = FKEYS[int(freq_key[0])]
    freq = labels.frequency_of(key, parsed.fy_start)
    day = _day_codes(parsed, sel)
    # dates finer than months
    order = np.lexsort((day, target))
    o_sorted, d_sorted = target[order], day[order]
    same = np.r_[False, o_sorted[1:] == o_sorted[:-1]]
    fine = same & np.r_[False, d_sorted[1:] != d_sorted[:-1]] & (d_sorted % 32 > 0)
    daily = bool(fine.any())
    if daily:
        if not opts.daily:
            f0 = int(np.flatnonzero(fine)[0])  # the second date of a month
            pos = sel[order[f0 - 1: f0 + 2]]
            _refuse_daily(per.text.to_numpy(dtype=object)[pos], w.row[pos], len(sel), name,
                          sheet, w.period_column)
        facts.daily_rows = len(sel)
    # duplicate periods: the same row period twice (the first row is kept)
    dup_sorted = np.r_[False, (d_sorted[1:] == d_sorted[:-1]) if daily else same[1:]]
    if dup_sorted.any():
        dup_rows = np.zeros(n, dtype=bool)
        dup_rows[sel[order[dup_sorted]]] = True
        cell_problems(sink, IN012, "the period appears twice in this series", dup_rows,
                      rows=w.row, columns=w.period_column, series=None,
                      found=per.text.to_numpy(dtype=object), expected="each period once per series",
                      fix="Delete or merge the repeated row (the first one is kept).",
                      file=name, sheet=sheet, per_row=True)
        order = order[~dup_sorted]
        o_sorted = o_sorted[~dup_sorted]
    rows_used = sel[order]  # table rows in period order, one per period (or per day)
    vals = numbers[rows_used]  # (T' x k)
    miss = missing[rows_used]
    # statuses per cell (markers, else the row's status column)
    ranks = None
    if marker is not None or status_rows is not None:
        col = None if status_rows is None else np.repeat(status_rows[rows_used][:, None], k, axis=1)
        ranks = _statuses(None if marker is None else marker[rows_used].reshape(-1),
                          None if col is None else col.reshape(-1))
        ranks = None if ranks is None else ranks.reshape(len(rows_used), k)
    # kinds, column by column, from vectorised column facts
    finite = np.isfinite(vals)
    with np.errstate(all="ignore"):
        vmin = np.where(finite.any(axis=0), np.nanmin(np.where(finite, vals, np.inf), axis=0), np.nan)
        vmax = np.where(finite.any(axis=0), np.nanmax(np.where(finite, vals, -np.inf), axis=0), np.nan)
    has100 = (finite & np.isclose(np.where(finite, vals, 0.0), 100.0)).any(axis=0)
    given = dict(opts.kinds)
    kinds_out: list[Kind] = []
    whys: list[str] = []
    for j, nm in enumerate(w.names):
        kind, why = kind_rules.decide(nm, w.headers.get(nm, nm), w.units.get(nm), given.get(nm),
                                      opts.default_kind, float(vmin[j]), float(vmax[j]),
                                      bool(has100[j]))
        kinds_out.append(kind)
        whys.append(why)
        facts.kinds[_how(why)] = facts.kinds.get(_how(why), 0) + 1
    is_index = np.array([kd == "index" for kd in kinds_out], dtype=bool)
    # non-positive index values
    nonpos = np.zeros((n, k), dtype=bool)
    if is_index.any():
        nonpos[rows_used] = finite & (vals <= 0) & is_index[None, :]
    # missing values inside each series (between its first and last value)
    any_fin = finite.any(axis=0)
    first = np.where(any_fin, finite.argmax(axis=0), 0)
    last = np.where(any_fin, len(rows_used) - 1 - finite[::-1].argmax(axis=0), -1)
    pos = np.arange(len(rows_used))[:, None]
    inside = miss & (pos >= first[None, :]) & (pos <= last[None, :])
    facts.outside_cells = int(miss.sum() - inside.sum())
    miss_mask = np.zeros((n, k), dtype=bool)
    miss_mask[rows_used] = inside
    # daily cells to months, column by column
    if daily:
        months, start = np.unique(o_sorted, return_index=True)
        count = np.add.reduceat(finite.astype(np.int64), start, axis=0)
        vz = np.where(finite, vals, 0.0)
        total = np.add.reduceat(vz, start, axis=0)
        idx_pos = np.where(finite, pos, -1)
        lastpos = np.maximum.reduceat(idx_pos, start, axis=0)
        stock = np.take_along_axis(vals, np.maximum(lastpos, 0), axis=0)
        kind_arr = np.array(kinds_out, dtype=object)
        agg = np.where((kind_arr == "flow")[None, :], total,
                       np.where((kind_arr == "index")[None, :], total / np.maximum(count, 1), stock))
        vals = np.where(count > 0, agg, np.nan)
        ranks = None if ranks is None else np.maximum.reduceat(ranks, start, axis=0)
        o_sorted = months
        counted = count[:, any_fin]
        if counted.size:
            facts.days_per_month = (int(counted.min()), int(counted.max()))
    lo, hi = int(o_sorted[0]), int(o_sorted[-1])
    t_n = hi - lo + 1
    full = np.full((t_n, k), np.nan)
    full[o_sorted - lo] = vals
    pidx = _period_index(lo, hi, freq)
    st_full = None
    if ranks is not None and (ranks > 0).any():
        st_full = np.zeros((t_n, k), dtype=np.int8)
        st_full[o_sorted - lo] = ranks
    if len(o_sorted) < t_n:
        present = np.zeros(t_n, dtype=bool)
        present[o_sorted - lo] = True
        gaps = np.flatnonzero(~present) + lo
        if k == 1:
            sink.add(_gap_problem(gaps, lo, pidx, freq, name, sheet, w.names[0]))
        else:
            sink.add(_gap_problem(gaps, lo, pidx, freq, name, sheet, None,
                                  f"the period column (every one of the {k:,} series)"))
    out: list[Series] = []
    statuses = np.asarray(STATUSES, dtype=object)
    for j, nm in enumerate(w.names):
        unit = w.units.get(nm)
        reference = w.references.get(nm)
        if reference is None and unit:
            ref = REFERENCE.search(unit)
            reference = ref.group("ref").strip() if ref else None
        st = None
        if st_full is not None and (st_full[:, j] > 0).any():
            st = pd.Series(statuses[st_full[:, j]], index=pidx, dtype=object)
        out.append(Series(name=nm, values=pd.Series(full[:, j], index=pidx, name=nm, copy=False),
                          frequency=freq, kind=kinds_out[j], unit=unit, status=st, source=name,
                          reference=reference, notes=(whys[j],)))
    per_text = per.text.to_numpy(dtype=object)
    facts.missing_cells = grid_problems(
        sink, IN032, "a value is missing", miss_mask, rows=w.row, columns=w.columns,
        series=w.names, found=text, periods=per_text, expected=_MISSING_EXPECTED,
        fix=_MISSING_FIX, file=name, sheet=sheet, severity="warning")
    grid_problems(sink, IN015, "an index value must be above zero", nonpos, rows=w.row,
                  columns=w.columns, series=w.names, found=text,
                  expected="a positive index level (e.g. 100 in the reference period)",
                  fix="Correct the value; if this is not an index, say the kind is flow or stock.",
                  remedy_key="series_kind", file=name, sheet=sheet)
    _unused_kinds(given, {nm for nm in w.names if nm in given}, out, sink, name, sheet)
    return out, facts
