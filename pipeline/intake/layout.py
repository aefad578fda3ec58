"""Stage 4, the layout: which columns are what, and every value cell as one long table.

``sdmx`` (TIME_PERIOD and OBS_VALUE columns), ``long`` (series, period and value columns;
optional unit, status, vintage), or ``wide`` (a period column and one column per series;
or periods across the header row and one row per series). Each layout is brought to one
:class:`Cells` table of text cells, each remembering its file row and column."""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

import numpy as np
import pandas as pd

from .. import labels
from ..errors import Location, Problem, RealbasisError, fail
from .codes import IN009, IN018, IN019, IN025
from .problems import clip
from .table import Table
from .values import parse_cells, ustrip

Layout = Literal["wide", "long", "sdmx"]

PERIOD_NAMES = frozenset({"period", "date", "time", "time_period", "month", "quarter", "year",
                          "fiscal_year", "fy", "ref_period", "reference_period", "obs_date",
                          "observation_date"})
VALUE_NAMES = frozenset({"value", "amount", "obs_value", "val"})
SERIES_NAMES = frozenset({"series", "series_name", "name", "variable", "item", "indicator",
                          "measure", "line", "account", "program", "programme", "segment",
                          "category"})
UNIT_NAMES = frozenset({"unit", "units", "unit_measure", "currency"})
STATUS_NAMES = frozenset({"status", "obs_status", "flag"})
VINTAGE_NAMES = frozenset({"vintage", "as_of", "asof", "release", "release_date", "as_of_date"})
IGNORED_NAMES = frozenset({"note", "notes", "comment", "comments", "source", "footnote"})
# SDMX-CSV: structural columns and attributes that are not part of a series key
SDMX_STRUCT = frozenset({"DATAFLOW", "STRUCTURE", "STRUCTURE_ID", "STRUCTURE_NAME", "ACTION"})
SDMX_ATTRS = frozenset({"OBS_STATUS", "OBS_CONF", "OBS_PRE_BREAK", "OBS_COM", "UNIT_MULT",
                        "UNIT_MEASURE", "DECIMALS", "TITLE", "TITLE_COMPL", "COMMENT",
                        "TIME_FORMAT", "BASE_PER", "COLL_METHOD", "EMBARGO_TIME", "COMPILATION",
                        "SOURCE_AGENCY", "UNIT_INDEX_BASE"})

_UNIT_IN_HEADER = re.compile(r"^(?P<name>.*?)(?P<space>\s*)(?:\((?P<u1>[^()\[\]]+)\)|\[(?P<u2>[^()\[\]]+)\])\s*$")
# what a unit in a header's trailing brackets may hold: words, numbers, currency signs and
# a few joiners ("USD thousands", "$m", "2020=100", "% of GDP", "index, 2015=100",
# "USD/month"); quotes, brackets, semicolons or a formula mark mean it is not a unit
_UNIT_TEXT = re.compile(r"[\w\s$€£¥%.,/=:+\-&'*^#°·]{1,60}")
REFERENCE = re.compile(r"(?:\b(?:index|idx|base|reference)\b[\s:,]*)?(?P<ref>[\w\- ]+?)\s*=\s*100\b",
                       re.IGNORECASE)


@dataclass
class Cells:
    """Every value cell of the file as one long table of text (internal)."""

    series: pd.Series  # str
    period: pd.Series  # str
    value: pd.Series  # str
    row: np.ndarray
    column: np.ndarray  # header name of the value cell, object
    period_column: np.ndarray  # header name where the period came from
    unit: pd.Series | None = None
    status: pd.Series | None = None
    status_sdmx: bool = False
    vintage: pd.Series | None = None
    headers: Mapping[str, str] | None = None  # series name -> original header (wide)
    units: Mapping[str, str | None] | None = None
    references: dict[str, str | None] | None = None
    series_column: str | None = None
    status_column: str | None = None
    vintage_column: str | None = None


@dataclass
class WideCells:
    """A wide table kept as columns (internal): one period column shared by every series
    column, the value cells as a 2-D array (rows x series), parsed column-wise in bulk."""

    period: pd.Series  # str, one per row
    values: np.ndarray  # object (rows x series) of str
    row: np.ndarray  # file row of each row
    names: list[str]
    columns: list[str]  # header of each series column
    period_column: str
    headers: Mapping[str, str]
    units: Mapping[str, str | None]
    references: dict[str, str | None]
    status: pd.Series | None = None  # one per row, applies to every series
    status_column: str | None = None


@dataclass(frozen=True)
class Plan:
    """What each column is: the layout and the position of each role."""

    layout: Layout
    roles: Mapping[str, int]
    transposed: bool = False
    unused: tuple[str, ...] = field(default=())


def norm(h: str) -> str:
    h = h.split(":", 1)[0] if ": " in h else h  # SDMX-CSV 'labels=both': "FREQ: Frequency"
    return re.sub(r"[\s\-]+", "_", h.strip().casefold())


def split_header(h: str) -> tuple[str, str | None, str | None]:
    """'Revenue (USD thousands)' -> ('Revenue', 'USD thousands', None);
    'Price index (2020=100)' -> ('Price index', '2020=100', '2020').

    Only a trailing ``(...)`` or ``[...]`` group that looks like a unit is split off;
    any other header (``=HYPERLINK("x","y")``, ``Sales (north (new))``) is a name and
    is kept whole."""
    m = _UNIT_IN_HEADER.match(h)
    if not m or not m.group("name").strip():
        return h, None, None
    name, unit = m.group("name").strip(), (m.group("u1") or m.group("u2")).strip()
    if not _UNIT_TEXT.fullmatch(unit) or not re.search(r"[^\W_]|[$€£¥%]", unit):
        return h, None, None  # not unit-like: the header is a name, kept whole
    if name[0] in "=+-@" and not m.group("space") and (name[-1].isalnum() or name[-1] == "_"):
        return h, None, None  # NAME(...) after a formula mark: a function call, not a unit
    ref = REFERENCE.search(unit)
    if ref:
        return name, unit, ref.group("ref").strip()
    return name, unit, None


def period_share(col: pd.Series, fy_start: int | None, *, years_count: bool = True) -> float:
    """Share of the (first 5,000 non-blank) cells that are period labels. With
    ``years_count=False`` plain numbers like 2019 do not count (they may be amounts)."""
    sample = col.iloc[:5000]
    sample = sample[sample.str.strip() != ""]
    if len(sample) == 0:
        return 0.0
    try:
        parsed = labels.parse_values(sample.tolist(), fy_start if fy_start and fy_start != 1 else 7)
    except RealbasisError as e:
        # slashed dates of unclear day/month order are periods all the same: the real
        # parse then raises PE106 with the column named
        return 1.0 if e.code == labels.PE106 else 0.0
    ok = parsed.keys != ""
    if not years_count:
        ok &= ~np.isin(parsed.kinds, (labels.YEAR, labels.YMNUM))
    return float(ok.mean())


def recognise(t: Table, fy_start: int | None) -> Plan:
    """Decide the layout from the header names, then from the cells."""
    name = t.file
    normed = [norm(h) for h in t.header]
    upper = [h.split(":", 1)[0].strip().upper() for h in t.header]
    if "TIME_PERIOD" in upper:
        if "OBS_VALUE" not in upper:
            raise fail(IN019, "an SDMX-CSV file needs an OBS_VALUE column",
                       expected="columns TIME_PERIOD and OBS_VALUE", found="TIME_PERIOD only",
                       fix="Export the data again as SDMX-CSV with observation values.", file=name)
        return Plan("sdmx", {"period": upper.index("TIME_PERIOD"), "value": upper.index("OBS_VALUE")})
    if "OBS_VALUE" in upper:
        raise fail(IN019, "an SDMX-CSV file needs a TIME_PERIOD column",
                   expected="columns TIME_PERIOD and OBS_VALUE", found="OBS_VALUE only",
                   fix="Export the data again as SDMX-CSV with time periods.", file=name)

    def find(names: frozenset[str]) -> int | None:
        return next((i for i, h in enumerate(normed) if h in names), None)

    period, value, series = find(PERIOD_NAMES), find(VALUE_NAMES), find(SERIES_NAMES)
    if period is not None and value is not None and series is not None:
        roles = {"period": period, "value": value, "series": series}
        for role, names in (("unit", UNIT_NAMES), ("status", STATUS_NAMES),
                            ("vintage", VINTAGE_NAMES)):
            pos = find(names)
            if pos is not None:
                roles[role] = pos
        unused = tuple(t.header[i] for i in range(len(t.header)) if i not in roles.values())
        return Plan("long", roles, unused=unused)

    def wide(i: int) -> Plan:
        roles = {"period": i}
        for role, names in (("status", STATUS_NAMES), ("vintage", VINTAGE_NAMES)):
            pos = find(names)
            if pos is not None and pos != i:
                roles[role] = pos
        return Plan("wide", roles)

    # wide: a period column found by its name, else the first column by its content,
    # else periods across the header row (one row per series: budget tables), else any
    # other column by content (plain numbers such as 2019 do not count there: amounts)
    if period is not None and period_share(t.col(period), fy_start) >= 0.8:
        return wide(period)
    if period_share(t.col(0), fy_start) >= 0.8:
        return wide(0)
    heads = pd.Series(t.header[1:], dtype=str)
    if len(heads) and period_share(heads, fy_start) >= 0.8:
        return Plan("wide", {"series": 0}, transposed=True)
    for i in range(1, len(t.header)):
        if i != period and period_share(t.col(i), fy_start, years_count=False) >= 0.8:
            return wide(i)
    raise fail(IN009, "no column of periods found",
               expected="a column of period labels (" + labels.ACCEPTED + "), or periods across the header row",
               found="columns " + ", ".join(repr(clip(h)) for h in t.header[:8]) + (" ..." if len(t.header) > 8 else ""),
               fix="Add a period column (e.g. 'period' with 2024-01, 2024Q1 or FY2025)"
                   + (", or choose the sheet that holds the table." if t.sheet else "."),
               remedy="sheet" if t.sheet and len(t.sheets) > 1 else "",
               file=name, sheet=t.sheet)


def units_row(t: Table, period: int) -> tuple[Table, dict[str, str]]:
    """A second header row of units (blank period cell, text that is no number under
    the series columns, e.g. ``,USD thousands,index``) is taken as the units and removed."""
    if len(t.values) < 2:
        return t, {}
    first = t.values[0]
    if str(first[period]).strip():
        return t, {}
    cells = {t.header[i]: str(first[i]).strip() for i in range(len(t.header)) if i != period}
    filled = {h: v for h, v in cells.items() if v}
    if not filled:
        return t, {}
    _, bad, _ = parse_cells(pd.Series(list(filled.values()), dtype=str), ".")
    if not bad.all():
        return t, {}
    return t.replace(values=t.values[1:], rows=t.rows[1:]), filled


def cells(t: Table, plan: Plan) -> tuple[Cells | WideCells, list[Problem], Table]:
    """The long table of value cells for ``plan``, problems met on the way, and the table
    without a units row (when there was one)."""
    if plan.layout == "sdmx":
        return _sdmx(t, plan.roles), [], t
    if plan.layout == "long":
        problems = []
        if plan.unused:
            problems.append(Problem(IN025, "columns not used by a long layout were ignored",
                                    "series, period, value and optional unit, status, vintage",
                                    ", ".join(clip(u) for u in plan.unused[:10]),
                                    "Nothing to do if they hold notes only.",
                                    Location(file=t.file, sheet=t.sheet, column=clip(plan.unused[0])),
                                    "warning"))
        return _long(t, plan.roles), problems, t
    if plan.transposed:
        return _transposed(t), [], t
    t, row_units = units_row(t, plan.roles["period"])
    if "vintage" in plan.roles:  # one series per name and vintage: the long path
        return (*_wide(t, plan.roles, row_units), t)
    return (*_wide_columns(t, plan.roles, row_units), t)


def _value_columns(t: Table, roles: Mapping[str, int],
                   row_units: Mapping[str, str] | None) -> tuple[list[int], list[str], dict, dict, dict, list[Problem]]:
    """Series columns of a wide table: positions, series names, headers, units and
    reference periods (and IN025 for columns of notes)."""
    name = t.file
    problems: list[Problem] = []
    p = roles["period"]
    skip = {p, roles.get("status", -1), roles.get("vintage", -1)}
    ignored = [i for i, h in enumerate(t.header) if i not in skip and norm(h) in IGNORED_NAMES]
    value_cols = [i for i in range(len(t.header)) if i not in skip and i not in ignored]
    if ignored:
        problems.append(Problem(IN025, "columns of notes were ignored", "",
                                ", ".join(clip(t.header[i]) for i in ignored),
                                "Nothing to do if they hold notes only.",
                                Location(file=name, sheet=t.sheet, column=clip(t.header[ignored[0]])),
                                "warning"))
    if not value_cols:
        raise fail(IN018, "the file has a period column but no series columns",
                   expected="one column of values per series next to the period column",
                   found="only " + ", ".join(repr(clip(h)) for h in t.header[:10]),
                   fix="Add the value columns, one per series.", file=name, sheet=t.sheet)
    split = {t.header[i]: split_header(t.header[i]) for i in value_cols}
    short = [split[t.header[i]][0] for i in value_cols]
    use_short = len({s.casefold() for s in short}) == len(short)
    names = [s if use_short else t.header[i] for s, i in zip(short, value_cols, strict=True)]
    if len(value_cols) == 1 and norm(names[0]) in VALUE_NAMES:
        # 'date,value' files: the file name is the better series name
        names = [Path(name).stem or names[0]]
    headers = dict(zip(names, (t.header[i] for i in value_cols), strict=True))
    row_units = row_units or {}
    units = {nm: row_units.get(t.header[i]) or split[t.header[i]][1]
             for nm, i in zip(names, value_cols, strict=True)}
    references: dict[str, str | None] = {}
    for nm, i in zip(names, value_cols, strict=True):
        ref = REFERENCE.search(row_units.get(t.header[i], ""))
        references[nm] = ref.group("ref").strip() if ref else split[t.header[i]][2]
    return value_cols, names, headers, units, references, problems


def _wide_columns(t: Table, roles: Mapping[str, int],
                  row_units: Mapping[str, str] | None = None) -> tuple[WideCells, list[Problem]]:
    value_cols, names, headers, units, references, problems = _value_columns(t, roles, row_units)
    p = roles["period"]
    vals = t.values[:, value_cols] if value_cols != list(range(p + 1, t.values.shape[1])) \
        else t.values[:, p + 1:]
    w = WideCells(t.col(p), vals, t.rows, names,
                  [t.header[i] for i in value_cols], t.header[p], headers, units, references)
    if "status" in roles:
        w.status = t.col(roles["status"])
        w.status_column = t.header[roles["status"]]
    return w, problems


def _wide(t: Table, roles: Mapping[str, int],
          row_units: Mapping[str, str] | None = None) -> tuple[Cells, list[Problem]]:
    value_cols, names, headers, units, references, problems = _value_columns(t, roles, row_units)
    p = roles["period"]
    n = len(t.values)
    k = len(value_cols)
    vals = t.values[:, value_cols].reshape(-1)  # row-major
    period = np.repeat(t.values[:, p], k)
    rows = np.repeat(t.rows, k)
    columns = np.tile(np.array([t.header[i] for i in value_cols], dtype=object), n)
    series = np.tile(np.array(names, dtype=object), n)
    long = Cells(pd.Series(series, dtype=str), pd.Series(period, dtype=str),
                 pd.Series(vals, dtype=str), rows, columns,
                 np.full(len(vals), t.header[p], dtype=object))
    if "status" in roles:
        long.status = pd.Series(np.repeat(t.values[:, roles["status"]], k), dtype=object)
        long.status_column = t.header[roles["status"]]
    if "vintage" in roles:
        long.vintage = pd.Series(np.repeat(t.values[:, roles["vintage"]], k), dtype=object)
        long.vintage_column = t.header[roles["vintage"]]
    long.headers = headers
    long.units = units
    long.references = references
    return long, problems


def _transposed(t: Table) -> Cells:
    """Periods across the header row; first column names the series."""
    heads = t.header[1:]
    names = t.col(0).str.strip()
    if not len(heads):
        raise fail(IN018, "no period columns", file=t.file)
    k = len(heads)
    vals = t.values[:, 1: k + 1].reshape(-1)
    split = {nm: split_header(nm) for nm in names}
    short = [split[nm][0] for nm in names]
    use_short = len({s.casefold() for s in short}) == len(short)
    final = [s if use_short else nm for s, nm in zip(short, names, strict=True)]
    long = Cells(pd.Series(np.repeat(np.array(final, dtype=object), k), dtype=str),
                 pd.Series(np.tile(np.array(heads, dtype=object), len(names)), dtype=str),
                 pd.Series(vals, dtype=str), np.repeat(t.rows, k),
                 np.tile(np.array(heads, dtype=object), len(names)),
                 np.tile(np.array(heads, dtype=object), len(names)))
    long.headers = dict(zip(final, names, strict=True))
    long.units = {f: split[nm][1] for f, nm in zip(final, names, strict=True)}
    long.references = {f: split[nm][2] for f, nm in zip(final, names, strict=True)}
    return long


def _long(t: Table, roles: Mapping[str, int]) -> Cells:
    c = {i: t.col(i) for i in range(t.values.shape[1])}
    n = len(t.values)
    long = Cells(ustrip(c[roles["series"]]), c[roles["period"]], c[roles["value"]], t.rows,
                 np.full(n, t.header[roles["value"]], dtype=object),
                 np.full(n, t.header[roles["period"]], dtype=object))
    long.series_column = t.header[roles["series"]]
    if "unit" in roles:
        long.unit = ustrip(c[roles["unit"]])
    if "status" in roles:
        long.status = c[roles["status"]]
        long.status_column = t.header[roles["status"]]
    if "vintage" in roles:
        long.vintage = c[roles["vintage"]]
        long.vintage_column = t.header[roles["vintage"]]
    return long


def _sdmx(t: Table, roles: Mapping[str, int]) -> Cells:
    upper = [h.split(":", 1)[0].strip().upper() for h in t.header]
    p = roles["period"]
    dims = [i for i in range(len(upper)) if i < p and upper[i] not in SDMX_STRUCT
            and upper[i] not in SDMX_ATTRS]
    c = {i: t.col(i) for i in range(t.values.shape[1])}
    n = len(t.values)
    if dims:
        codes = [c[i].str.split(":", n=1).str[0].str.strip() for i in dims]
        key = codes[0]
        for part in codes[1:]:
            key = key + "." + part
    else:
        key = pd.Series(["series"] * n, dtype=object)
    long = Cells(key, c[p], c[roles["value"]], t.rows,
                 np.full(n, t.header[roles["value"]], dtype=object),
                 np.full(n, t.header[p], dtype=object))
    if "UNIT_MEASURE" in upper:
        unit = c[upper.index("UNIT_MEASURE")].str.split(":", n=1).str[0].str.strip()
        if "UNIT_MULT" in upper:
            mult = c[upper.index("UNIT_MULT")].str.split(":", n=1).str[0].str.strip()
            unit = unit.where(mult.isin(["", "0"]), unit + " x10^" + mult)
        long.unit = unit
    if "OBS_STATUS" in upper:
        long.status = c[upper.index("OBS_STATUS")].str.split(":", n=1).str[0].str.strip()
        long.status_sdmx = True
        long.status_column = t.header[upper.index("OBS_STATUS")]
    refs: dict[str, str | None] = {}
    if "BASE_PER" in upper:
        base = c[upper.index("BASE_PER")].str.strip()
        first = pd.DataFrame({"k": key.to_numpy(), "b": base.to_numpy()})
        first = first[first["b"] != ""].drop_duplicates("k")
        refs = dict(zip(first["k"], first["b"], strict=True))
    long.references = refs
    return long


_YEAR_NAMES = frozenset({"year", "yr", "years"})
_QUARTER_NAMES = frozenset({"quarter", "qtr", "q", "quarters"})
_MONTH_NAMES = frozenset({"month", "mon", "m", "months"})


def default_unit(cells: Cells | WideCells, unit: str) -> None:
    """Give ``unit`` (a title line's) to every series that has none."""
    ref = REFERENCE.search(unit)
    reference = ref.group("ref").strip() if ref else None
    if isinstance(cells, WideCells):
        names = cells.names
    else:
        if cells.unit is not None:
            cells.unit = cells.unit.where(cells.unit != "", unit)
            return
        names = list(pd.unique(cells.series.to_numpy(dtype=object)))
    units = dict(cells.units or {})
    refs = dict(cells.references or {})
    for nm in names:
        if not units.get(nm):
            units[nm] = unit
            if refs.get(nm) is None:
                refs[nm] = reference
    cells.units, cells.references = units, refs


def combine_period_columns(t: Table) -> tuple[Table, str | None]:
    """Separate year and quarter (or year and month) columns become one period column
    in place of the year column (``1959`` and ``1`` -> ``1959Q1``; ``2024`` and ``3`` or
    ``Mar`` -> ``2024-03``). Both must be named so and hold years and quarters 1-4
    (``Q1``) or months 1-12 (month names) in at least 80% of the filled cells."""
    normed = [norm(h) for h in t.header]
    year = next((i for i, h in enumerate(normed) if h in _YEAR_NAMES), None)
    if year is None:
        return t, None
    for names, what, top in ((_QUARTER_NAMES, "quarters", 4), (_MONTH_NAMES, "months", 12)):
        sub = next((i for i, h in enumerate(normed) if h in names), None)
        if sub is None:
            continue
        y = t.col(year).str.strip().str.replace(r"\.0+$", "", regex=True)
        s = t.col(sub).str.strip().str.upper().str.replace(r"\.0+$", "", regex=True)
        s = s.str.replace(r"^Q(?=[1-4]$)", "", regex=True)
        if top == 12:
            month = s.str[:3].map(labels._MONTHS)
            s = s.where(month.isna(), month.astype("Int64").astype(str))
        filled = (y != "") | (s != "")
        num = pd.to_numeric(s, errors="coerce")
        ok = y.str.fullmatch(r"[12]\d{3}") & num.between(1, top) & (num % 1 == 0)
        if not filled.any() or ok[filled].mean() < 0.8:
            continue
        n = num.where(ok).astype("Int64").astype(str)
        label = (y + "Q" + n) if top == 4 else (y + "-" + n.str.zfill(2))
        label = label.where(ok, (t.col(year).str.strip() + " " + t.col(sub).str.strip())
                            .str.strip())
        keep = [c for c in range(len(t.header)) if c != sub]
        cells = t.values[:, keep].copy()
        cells[:, keep.index(year)] = label.to_numpy(dtype=object)
        header = tuple(h for c, h in enumerate(t.header) if c != sub)
        joined = "period" if "period" not in normed else f"{t.header[year]} {t.header[sub]}"
        header = tuple((joined if c == year else h) for c, h in zip(keep, header, strict=True))
        note = (f"Columns {clip(t.header[year])!r} and {clip(t.header[sub])!r} combined into "
                f"{what} (e.g. {label.iloc[0]!r}).")
        return t.replace(header=header, values=cells), note
    return t, None
