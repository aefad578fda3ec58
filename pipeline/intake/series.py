"""Stage 6, series: group the cells into one :class:`~pipeline.model.Series` per series
(per vintage in long files) and check each: mixed frequencies, duplicate periods, gaps,
units, kinds (:mod:`pipeline.intake.kinds`), index values above zero."""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from .. import labels
from ..errors import Location, Problem
from ..model import Frequency, Kind, Series
from . import kinds as kind_rules
from .codes import IN012, IN013, IN014, IN015, IN020, IN022, IN024
from .layout import REFERENCE, Cells
from .periods import Periods
from .problems import Problems, cell_problems, clip

FKEYS = ("M", "Q", "A", "FY", "FQ")  # frequency keys of pipeline.labels


def assemble(cells: Cells, per: Periods, series_text: pd.Series, numbers: np.ndarray,
             value_text: pd.Series, status: np.ndarray | None, vintage: np.ndarray | None,
             keep: np.ndarray, kinds: Mapping[str, Kind] | None, sink: Problems, *,
             file: str, sheet: str | None) -> list[Series]:
    """One Series per (name, vintage) over the cells in ``keep``."""
    name = file
    parsed = per.parsed
    sel = np.flatnonzero(keep)
    sname = series_text.to_numpy(dtype=object)[sel]
    vint = vintage[sel] if vintage is not None else np.full(len(sel), "", dtype=object)
    gkey = pd.MultiIndex.from_arrays([sname, vint]) if vintage is not None else pd.Index(sname)
    gcodes, guniq = pd.factorize(gkey, sort=False)
    keys_all = parsed.keys[sel]
    # frequency keys as small integers (fast grouping); FKEYS[code] is the key
    keys = np.full(len(sel), -1, dtype=np.int8)
    for code, key in enumerate(FKEYS):
        keys[keys_all == key] = code
    ords = parsed.ordinals[sel]
    kinds_sel = parsed.kinds[sel]
    vals = numbers[sel]
    rows_sel = cells.row[sel]
    stat_sel = status[sel] if status is not None else None

    # target-frequency ordinals per row, per frequency key (vectorised per key)
    freq_key = keys.copy()
    target_ord = np.zeros(len(sel), dtype=np.int64)
    for key in np.unique(keys):
        m = keys == key
        k2 = key
        if FKEYS[key] == "M" and bool((kinds_sel[m] == labels.DATE).all()):
            k2 = FKEYS.index(labels.date_frequency(ords[m], parsed.fy_start))
            freq_key[m] = k2
        idx = labels.to_periods(ords[m], FKEYS[k2], parsed.fy_start)
        target_ord[m] = idx.asi8

    frame = pd.DataFrame({"g": gcodes, "f": freq_key, "o": target_ord, "v": vals, "r": rows_sel,
                          "i": np.arange(len(sel))})
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

    # duplicate periods
    dup = frame.duplicated(["g", "o"], keep="first").to_numpy()
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

    frame = frame.sort_values(["g", "o"], kind="stable")
    gcol = frame["g"].to_numpy()
    starts = np.flatnonzero(np.r_[True, gcol[1:] != gcol[:-1]]) if len(gcol) else np.array([], int)
    ends = np.r_[starts[1:], len(gcol)] if len(gcol) else np.array([], int)
    out: list[Series] = []
    kinds = dict(kinds or {})
    used_kinds: set[str] = set()
    o_all = frame["o"].to_numpy()
    v_all = frame["v"].to_numpy()
    i_all = frame["i"].to_numpy()
    f_all = frame["f"].to_numpy()
    nonpos_mask = np.zeros(len(cells.row), dtype=bool)
    unit_all = cells.unit.to_numpy(dtype=object) if cells.unit is not None else None
    for a, b in zip(starts.tolist(), ends.tolist(), strict=True):
        g = int(gcol[a])
        gname = str(guniq[g] if vintage is None else guniq[g][0])
        gvint = None if vintage is None else (str(guniq[g][1]) or None)
        key = FKEYS[int(f_all[a])]
        freq: Frequency = labels.frequency_of(key, parsed.fy_start)
        o = o_all[a:b]
        v = v_all[a:b]
        lo, hi = int(o[0]), int(o[-1])
        full = np.full(hi - lo + 1, np.nan)
        full[o - lo] = v
        pidx = pd.PeriodIndex(pd.arrays.PeriodArray(np.arange(lo, hi + 1, dtype=np.int64),
                                                    dtype=pd.PeriodDtype(freq.pandas_freq)))
        values = pd.Series(full, index=pidx, name=gname)
        # unit
        unit: str | None = None
        if cells.units is not None:
            unit = cells.units.get(gname)
        if unit_all is not None:
            us = unit_all[sel[i_all[a:b]]]
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
        vmin = float(finite.min()) if len(finite) else np.nan
        vmax = float(finite.max()) if len(finite) else np.nan
        has100 = bool(np.isclose(finite, 100.0).any()) if len(finite) else False
        notes: list[str] = []
        if gname in kinds:
            kind = kinds[gname]
            used_kinds.add(gname)
            notes.append(f"kind {kind!r} given by the user")
        else:
            kind, why = kind_rules.guess(gname, header, unit, vmin, vmax, has100)
            notes.append(why)
        if kind == "index":
            bad = np.isfinite(v) & (v <= 0)
            if bad.any():
                nonpos_mask[sel[i_all[a:b][bad]]] = True
        st_series = None
        if stat_sel is not None:
            st = stat_sel[i_all[a:b]]
            if (st != "final").any():
                st_full = np.full(hi - lo + 1, "final", dtype=object)
                st_full[o - lo] = st
                st_series = pd.Series(st_full, index=pidx, dtype=object)
        # gaps
        gaps = np.array([], dtype=np.int64)
        if len(o) < hi - lo + 1:
            present = np.zeros(hi - lo + 1, dtype=bool)
            present[o - lo] = True
            gaps = np.flatnonzero(~present) + lo
        if len(gaps):
            gl = freq.labels(pidx[gaps - lo][:5])
            sink.add(Problem(
                IN013, f"{len(gaps)} period(s) missing inside the series", "one row per period from first to last",
                "missing " + ", ".join(gl) + (" ..." if len(gaps) > 5 else ""),
                "Add the missing periods (blank values are fine) or check the period labels.",
                Location(file=name, sheet=sheet, series=clip(gname), period=gl[0]), "warning"))
        out.append(Series(name=gname, values=values, frequency=freq, kind=kind, unit=unit,
                          status=st_series, source=name, vintage=gvint, reference=reference,
                          notes=tuple(notes)))
    cell_problems(sink, IN015, "an index value must be above zero", nonpos_mask, rows=cells.row,
                  columns=cells.column, series=series_text.to_numpy(dtype=object),
                  found=value_text.to_numpy(dtype=object),
                  expected="a positive index level (e.g. 100 in the reference period)",
                  fix="Correct the value; if this is not an index, say the kind is flow or stock.",
                  file=name, sheet=sheet)
    missing_kinds = sorted(set(kinds) - used_kinds)
    if missing_kinds:
        sink.add(Problem(IN022, "kinds were given for series not in the file",
                         "names of series in the file: " + ", ".join(clip(s.name) for s in out[:10]),
                         ", ".join(clip(k) for k in missing_kinds[:20]),
                         "Check the spelling of the series names.",
                         Location(file=name, sheet=sheet), "warning"))
    return out


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
