"""Stage 5, values and statuses: value cells to numbers (thousands separators, the
decimal comma found per file, ``(1,234)`` negatives, currency symbols and codes), missing
markers, status words of a status column, and vintage dates.

Everything is vectorised: plain numbers take the C path of ``pandas.to_numeric``; only the
other cells go through the text clean-up."""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from .codes import IN011, IN016, IN023, IN030
from .problems import Problems, cell_problems

if TYPE_CHECKING:
    from .layout import Cells, WideCells

MISSING = frozenset({"", "n/a", "na", "nan", "-", "--", "—", "–", "..", "...", "…", "null",
                     "none", "#n/a", "n.a.", "n.a"})

STATUS_WORDS = {
    "": "final", "final": "final", "f": "final", "a": "final", "normal": "final",
    "preliminary": "preliminary", "prelim": "preliminary", "provisional": "preliminary",
    "p": "preliminary", "estimate": "preliminary", "estimated": "preliminary",
    "e": "preliminary",
    "projected": "projected", "projection": "projected", "forecast": "projected",
    "proj": "projected", "budget": "projected",
}
# Status markers printed beside values (common practice in agencies' tables): p
# preliminary, e estimated (preliminary), f forecast (projected), r revised (final).
DEFAULT_MARKERS = {"p": "preliminary", "e": "preliminary", "f": "projected", "r": "final"}
# a number with one letter glued to it or after it: 312.5p, 312.5 p, 312.5(p), 312.5 (p)
_MARKED = re.compile(r"^(?P<num>.*?[\d)])\s*(?:\((?P<m1>[A-Za-z])\)|(?P<m2>[A-Za-z]))$")

# SDMX observation status (SDMX Content-Oriented Guidelines, code list CL_OBS_STATUS,
# from memory): P = provisional -> preliminary, F = forecast -> projected; every other
# code (A normal, B break, E estimated, ...) says nothing about revision -> final.
SDMX_STATUS = {"P": "preliminary", "F": "projected"}

_CODES = "USD|EUR|GBP|JPY|CAD|AUD|NZD|CHF|CNY|SEK|NOK|DKK|INR|HKD|SGD|ZAR|MXN|BRL"
_CURRENCY = re.compile(rf"^(?:(?:US|A|C|NZ|HK|S)?[$€£¥]|(?:{_CODES})\s*)|(?:\s*(?:{_CODES})|[$€£¥])$",
                       re.IGNORECASE)
_NUM_POINT = re.compile(r"[-+]?(?:\d{1,3}(?:,\d{3})+|\d+)(?:\.\d*)?(?:[eE][-+]?\d+)?|[-+]?\.\d+(?:[eE][-+]?\d+)?")
_NUM_COMMA = re.compile(r"[-+]?(?:\d{1,3}(?:\.\d{3})+|\d+)(?:,\d*)?(?:[eE][-+]?\d+)?|[-+]?,\d+")


def detect_decimal(values: pd.Series, delimiter: str | None = None) -> str:
    """',' when the cells look like decimal-comma numbers, else '.' (per file).

    Evidence for a decimal comma: ``1.234,5``, ``12,5``, ``1234,56``; for a point:
    ``1,234.5``, ``12.5``, ``1234.56``. Groups of three after the separator (``1,234``)
    are ambiguous; a tie is a point unless the file is semicolon-separated (common
    practice where the comma is the decimal mark)."""
    if len(values) > 20000:
        values = values.iloc[:: max(1, len(values) // 20000)]
    s = values[values.str.contains(r"[.,]", regex=True)]
    s = pd.Series(s.unique(), dtype=str).str.replace(r"[^\d.,\-]", "", regex=True)
    comma = (s.str.fullmatch(r"-?\d{1,3}(\.\d{3})+,\d+") | s.str.fullmatch(r"-?\d+,(\d{1,2}|\d{4,})")
             | s.str.fullmatch(r"-?\d{4,},\d+")).sum()
    point = (s.str.fullmatch(r"-?\d{1,3}(,\d{3})+\.\d+") | s.str.fullmatch(r"-?\d+\.(\d{1,2}|\d{4,})")
             | s.str.fullmatch(r"-?\d{4,}\.\d+")).sum()
    if comma > point:
        return ","
    if point > comma:
        return "."
    return "," if delimiter == "semicolon" else "."


def parse_numbers(values: pd.Series, decimal: str = ".") -> tuple[np.ndarray, np.ndarray]:
    """Vectorised: text cells -> (float64 values, mask of cells that are not numbers).

    Missing markers (blank, n/a, NA, -, .., null) give NaN and are not errors."""
    out, bad, _ = parse_cells(values, decimal)
    return out, bad


def parse_cells(values: pd.Series, decimal: str,
                markers: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(values, not-a-number mask, missing mask). Plain numbers take the C fast path
    (``pandas.to_numeric``); only the other cells go through the text clean-up. With
    ``markers`` (an object array of '' as long as ``values``) a status letter after a
    number is taken off and written there (lower case)."""
    values = values.astype(str)
    n = len(values)
    out = np.full(n, np.nan)
    rest = np.ones(n, dtype=bool)
    if decimal == ".":
        try:  # every cell a plain number (the usual wide file): one C-level conversion
            fast = values.to_numpy(dtype=object).astype(np.float64)
        except (ValueError, TypeError):
            fast = pd.to_numeric(values, errors="coerce").to_numpy(dtype=float)
        done = ~np.isnan(fast)
        out[done] = fast[done]
        rest = ~done
    missing = np.zeros(n, dtype=bool)
    t = values[rest].str.strip()
    missing[rest] = t.str.lower().isin(MISSING).to_numpy()
    need = rest & ~missing
    t = t[~missing[rest]]
    if need.any():
        x = t
        if markers is not None:
            got = x.str.extract(_MARKED)
            hit = got["num"].notna().to_numpy()
            if hit.any():
                letter = got["m1"].fillna(got["m2"]).str.lower()
                x = x.where(~hit, got["num"])
                where = np.flatnonzero(need)[hit]
                markers[where] = letter.to_numpy(dtype=object)[hit]
        neg = x.str.fullmatch(r"\(.*\)").to_numpy(dtype=bool)
        x = x.str.replace(r"^\((.*)\)$", r"\1", regex=True).str.strip()
        # sign may sit before or after a currency symbol: -$1,234 or $-1,234
        sign = x.str.startswith("-").to_numpy(dtype=bool)
        x = x.str.replace(r"^[-+]\s*", "", regex=True)
        x = x.str.replace(_CURRENCY, "", regex=True).str.strip()
        sign2 = x.str.startswith("-").to_numpy(dtype=bool)
        x = x.str.replace(r"^[-+]", "", regex=True)
        x = x.str.replace(r"[\s\u00a0\u202f']", "", regex=True)
        pattern = _NUM_POINT if decimal == "." else _NUM_COMMA
        valid = x.str.fullmatch(pattern).to_numpy(dtype=bool)
        if decimal == ".":
            y = x.str.replace(",", "", regex=False)
        else:
            y = x.str.replace(".", "", regex=False).str.replace(",", ".", regex=False)
        nums = pd.to_numeric(y.where(valid, "nan"), errors="coerce").to_numpy(dtype=float)
        nums = np.where(neg ^ sign ^ sign2, -nums, nums)
        out[need] = nums
    bad = ~missing & ~np.isfinite(out)
    out[bad] = np.nan
    return out, bad, missing


def ustrip(s: pd.Series) -> pd.Series:
    """``str.strip`` computed over the unique values only (fast for repetitive columns)."""
    codes, uniques = pd.factorize(s.to_numpy(dtype=object))
    stripped = np.array([str(u).strip() for u in uniques], dtype=object)
    out = np.where(codes >= 0, stripped[np.where(codes >= 0, codes, 0)] if len(stripped) else "", "")
    return pd.Series(out, index=s.index, dtype=object)


def status_column(text: pd.Series, sdmx: bool) -> tuple[np.ndarray, np.ndarray]:
    """(status per cell, mask of cells whose status word is not recognised)."""
    st = ustrip(text)
    if sdmx:
        out = st.str.upper().map(SDMX_STATUS).fillna("final").to_numpy(dtype=object)
        return out, np.zeros(len(out), dtype=bool)
    out = st.str.lower().map(STATUS_WORDS).to_numpy(dtype=object)
    bad = pd.isna(out)
    return np.where(bad, "final", out), np.asarray(bad, dtype=bool)


def vintage_column(text: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    """(ISO date or '' per cell, mask of cells that are not dates)."""
    vt = ustrip(text)
    u, inv = np.unique(vt.to_numpy(dtype=str), return_inverse=True)
    dates = pd.to_datetime(pd.Series(u), errors="coerce", format="ISO8601")
    iso = np.where(dates.isna(), None, dates.dt.strftime("%Y-%m-%d").to_numpy(dtype=object))
    iso = np.where(u == "", "", iso)
    vintage = iso[inv]
    bad = np.asarray(pd.isna(vintage), dtype=bool)
    return np.where(bad, "", vintage), bad


# --- the values stage of read_file --------------------------------------------------------

@dataclass(frozen=True)
class Values:
    """Numbers of every value cell (internal): ``numbers`` (NaN where missing or bad),
    ``bad`` (not a number), ``missing`` (blank or a missing marker)."""

    text: pd.Series
    numbers: np.ndarray
    bad: np.ndarray
    missing: np.ndarray
    markers: np.ndarray  # status letter after the number ('' for none), lower case
    unknown: np.ndarray  # cells whose marker has no known meaning (IN030, not IN011)


def read(cells: Cells, decimal: str) -> Values:
    markers = np.full(len(cells.value), "", dtype=object)
    numbers, bad, missing = parse_cells(cells.value, decimal, markers)
    return Values(cells.value, numbers, bad, missing, markers, np.zeros(len(bad), dtype=bool))


MARKER_EXPECTED = "a number, or a number with a marker whose meaning is known: "
MARKER_FIX = ("Say what the marker means (final, preliminary or projected), or remove it from "
              "the cell.")


def marker_statuses(v: Values, keep: np.ndarray,
                    meaning: Mapping[str, str]) -> tuple[np.ndarray | None, dict[str, int], np.ndarray]:
    """Status from the marker letter of each value ('' where none; None when no value has
    one), the count of cells per marker, and the cells whose letter has no meaning (left
    out, for IN030; marked in ``v.unknown`` and ``v.bad``)."""
    has = (v.markers != "") & keep & ~v.bad
    unknown = np.zeros(len(v.markers), dtype=bool)
    if not has.any():
        return None, {}, unknown
    letters = v.markers[has]
    u, n = np.unique(letters.astype(str), return_counts=True)
    counts = {str(a): int(b) for a, b in zip(u, n, strict=True)}
    status = np.full(len(v.markers), "", dtype=object)
    mapped = pd.Series(v.markers, dtype=object).map(dict(meaning)).to_numpy(dtype=object)
    unknown = has & pd.isna(mapped)
    status[has & ~unknown] = mapped[has & ~unknown]
    v.unknown[unknown] = True
    v.bad[unknown] = True
    v.numbers[unknown] = np.nan
    return status, counts, unknown


def report_markers(v: Values, cells: Cells, series: np.ndarray, unknown: np.ndarray,
                   meaning: Mapping[str, str], sink: Problems, *, file: str,
                   sheet: str | None) -> None:
    cell_problems(sink, IN030, "the value carries a status marker of no known meaning", unknown,
                  rows=cells.row, columns=cells.column, series=series,
                  found=v.text.to_numpy(dtype=object),
                  expected=MARKER_EXPECTED + ", ".join(f"{k} ({s})" for k, s in sorted(meaning.items())),
                  fix=MARKER_FIX, file=file, sheet=sheet)


def report_bad(v: Values, cells: Cells, series: np.ndarray, keep: np.ndarray, sink: Problems,
               *, file: str, sheet: str | None) -> None:
    cell_problems(sink, IN011, "the cell is not a number", v.bad & keep & ~v.unknown, rows=cells.row,
                  columns=cells.column, series=series, found=v.text.to_numpy(dtype=object),
                  expected="a number such as 1234.5, 1,234.5, (1,234) or $1,234; "
                           "blank, n/a or - for missing",
                  fix="Correct the number or leave the cell blank if it is missing.",
                  file=file, sheet=sheet)


def statuses(cells: Cells, series: np.ndarray, keep: np.ndarray, sink: Problems, *,
             file: str, sheet: str | None) -> np.ndarray | None:
    """Status of every cell from a status column (None without one); IN016 for words
    that are no status."""
    if cells.status is None:
        return None
    status, bad = status_column(cells.status, cells.status_sdmx)
    cell_problems(sink, IN016, "the status is not final, preliminary or projected", bad & keep,
                  rows=cells.row, columns=cells.status_column, series=series,
                  found=ustrip(cells.status).to_numpy(dtype=object),
                  expected="final, preliminary (p, provisional, estimate) or projected "
                           "(forecast, budget); blank = final",
                  fix="Write one of the accepted status words.", file=file, sheet=sheet)
    return status


def vintages(cells: Cells, series: np.ndarray, keep: np.ndarray, sink: Problems, *,
             file: str, sheet: str | None) -> np.ndarray | None:
    """ISO as-of date of every cell from a vintage column (None without one); IN023."""
    if cells.vintage is None:
        return None
    vintage, bad = vintage_column(cells.vintage)
    cell_problems(sink, IN023, "the vintage is not a date", bad & keep, rows=cells.row,
                  columns=cells.vintage_column, series=series,
                  found=ustrip(cells.vintage).to_numpy(dtype=object),
                  expected="an ISO date such as 2025-03-15 (the date the values were as of)",
                  fix="Write the as-of date as YYYY-MM-DD.", file=file, sheet=sheet)
    return vintage


def read_wide(w: WideCells, decimal: str) -> Values:
    """Values of a wide table's cells, parsed in one bulk pass (row-major order)."""
    flat = pd.Series(w.values.reshape(-1), dtype=object, copy=False)
    markers = np.full(len(flat), "", dtype=object)
    numbers, bad, missing = parse_cells(flat, decimal, markers)
    return Values(flat, numbers, bad, missing, markers, np.zeros(len(bad), dtype=bool))


def wide_sample(w: WideCells, limit: int = 20_000) -> pd.Series:
    """An evenly spaced sample of a wide table's cells (for the decimal mark)."""
    flat = w.values.reshape(-1)
    step = max(1, len(flat) // limit)
    return pd.Series(flat[::step], dtype=object).astype(str)
