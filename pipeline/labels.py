"""Period labels: turn the text people write for a period into pandas Periods.

Accepted (case and surrounding blanks ignored):

=====================  =========================  ==================================
style                  examples                   frequency
=====================  =========================  ==================================
ISO date (+ time)      2024-01-31, 2024/01/31     monthly (a column may make it Q/A)
slashed date           31/01/2024, 1/31/2024      monthly; day/month order decided by
                                                  the column (PE106 when it cannot be)
year-month             2024-01, 2024/1, 2024M01,  monthly
                       2024-M01 (SDMX), 202401
month-year             03/2024, 3/2024, 03-2024   monthly
month name             Jan 2024, January 2024,    monthly
                       Jan-2024, 2024 Jan
quarter                2024Q1, 2024-Q1, Q1 2024   quarterly (calendar)
calendar year          2024, 2024-A1 (SDMX)       calendar years
fiscal year            FY2025, FY 2025, FY-2025   fiscal years (needs start month)
fiscal quarter         FY2025Q1, Q1 FY2025        fiscal quarters (needs start month)
fiscal span            2024-25, 2024/25,          fiscal years (needs start month);
                       2024-2025                  labelled FY2025 (the year it ends)
=====================  =========================  ==================================

Decisions (see DEVELOPERS notes):

* A fiscal year is labelled by the calendar year in which it ends (``model.Frequency``):
  with a July start, ``FY2025`` and ``2024-25`` are both July 2024 - June 2025.
* The fiscal start month is never assumed. Labels that need it (``FY2025``,
  ``FY2025Q1``, ``2024-25``) raise ``PE102`` when ``fy_start`` is None. ``fy_start=1``
  is allowed for ``FY`` labels (fiscal year = calendar year) but refused for span
  labels like ``2024-25`` (``PE105``), which by their form cross two calendar years.
* Plain quarter labels (``2024Q1``) are always calendar quarters, whatever ``fy_start``.
* ``2011-12`` can be December 2011 or the fiscal year 2011-12. Alone it is a month.
  In a column, when every year-month label has the form ``YYYY-(YY+1)`` and there are at
  least two distinct such labels (or any label only a span can be, like ``2012-13``),
  the whole column is read as fiscal years ("consecutive years means fiscal years").
* A column made only of ISO dates is monthly, unless the dates are spaced by whole
  quarters on calendar-quarter months (read as quarters) or by whole years in January or
  December (calendar years), or in the fiscal start or end month when ``fy_start`` is
  given (fiscal years). ``parse_label`` on a single date always gives its month.

Everything is vectorised over the *unique* labels of a column, then mapped back with the
factorized codes, so a 1,000,000-row column with a few thousand distinct labels parses in
a fraction of a second.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import pandas as pd

from .errors import RealbasisError, fail, register
from .model import Frequency

PE101 = register("PE101", "period label not recognised")
PE102 = register("PE102", "fiscal year start month needed")
PE103 = register("PE103", "period labels of mixed frequencies")
PE104 = register("PE104", "fiscal start month out of range")
PE105 = register("PE105", "fiscal span label needs a start month other than January")
PE106 = register("PE106", "day and month order of dates is ambiguous")

ACCEPTED = (
    "2024-01-31, 2024-01, 2024M01, 03/2024, 202403, Jan 2024, January 2024, 2024Q1, 2024-Q1, Q1 2024, "
    "2024, FY2025, FY2025Q1, 2024-25, 2024/25"
)

# Label kinds (per unique label) ---------------------------------------------------------
BAD, DATE, YM, AMBIG, SPAN, MNAME, QTR, YEAR, FYEAR, FYQTR, SLASH, MY, YMNUM = range(13)
# MY: month first (03/2024, 3/2024, 03-2024); YMNUM: six digits (202403), which a plain
# number can also be, so a column of them is only taken for periods by its name or place

_MONTHS = {
    "JAN": 1, "JANUARY": 1, "FEB": 2, "FEBRUARY": 2, "MAR": 3, "MARCH": 3, "APR": 4,
    "APRIL": 4, "MAY": 5, "JUN": 6, "JUNE": 6, "JUL": 7, "JULY": 7, "AUG": 8, "AUGUST": 8,
    "SEP": 9, "SEPT": 9, "SEPTEMBER": 9, "OCT": 10, "OCTOBER": 10, "NOV": 11,
    "NOVEMBER": 11, "DEC": 12, "DECEMBER": 12,
}
_MON = "(?P<mon>" + "|".join(sorted(_MONTHS, key=len, reverse=True)) + r")\.?"
_Y = r"(?P<y>[12]\d{3})"

# (kind, regex); each is tried with fullmatch on the labels not matched so far.
_PATTERNS: tuple[tuple[int, str], ...] = (
    (SLASH, r"(?P<a>\d{1,2})[/.](?P<b>\d{1,2})[/.]" + _Y),
    (DATE, _Y + r"[-/](?P<m>\d{1,2})[-/](?P<d>\d{1,2})(?:[T ]\d{1,2}:\d{2}(?::\d{2}(?:\.\d+)?)?Z?)?"),
    (YEAR, _Y + r"(?:\.0+|-A1?)?"),
    (YM, _Y + r"(?:[-/]|\s*-?M)(?P<m>\d{1,2})"),
    (MY, r"(?P<m>\d{1,2})[-/]" + _Y),
    (YMNUM, _Y + r"(?P<m>0[1-9]|1[0-2])"),
    (SPAN, _Y + r"\s*[-/]\s*(?P<y2>[12]\d{3})"),
    (QTR, _Y + r"\s*[- ]?\s*Q(?P<q>[1-4])"),
    (QTR, r"Q(?P<q>[1-4])\s*[- ]?\s*" + _Y),
    (FYQTR, r"FY\s*[- ]?\s*" + _Y + r"\s*[- ]?\s*Q(?P<q>[1-4])"),
    (FYQTR, r"Q(?P<q>[1-4])\s*[- ]?\s*FY\s*[- ]?\s*" + _Y),
    (FYEAR, r"FY\s*[- ]?\s*" + _Y),
    (MNAME, _MON + r"\s*[-,/ ]?\s*" + _Y),
    (MNAME, _Y + r"\s*[- ]?\s*" + _MON),
)


@dataclass(frozen=True)
class LabelColumn:
    """A parsed column of period labels.

    ``index`` has one entry per input value (NaT where the label did not parse);
    ``frequency`` is the single frequency of the column; ``bad`` lists ``(position,
    text)`` of the values that did not parse (0-based positions in the input).
    """

    index: pd.PeriodIndex
    frequency: Frequency
    bad: tuple[tuple[int, str], ...] = ()


@dataclass(frozen=True)
class _Unique:
    """Labels parsed over their unique values (internal)."""

    uniques: np.ndarray  # object array of original text
    codes: np.ndarray  # per input value -> position in uniques, -1 for missing
    kind: np.ndarray  # int8 label kind per unique
    year: np.ndarray  # int64 (for SPAN/AMBIG: first year)
    sub: np.ndarray  # month (DATE/YM/AMBIG/MNAME) or quarter (QTR/FYQTR); 0 otherwise
    sub2: np.ndarray  # SLASH dates: the second number (first is in sub); DATE: the day


def _check_fy_start(fy_start: int | None) -> int | None:
    if fy_start is None:
        return None
    try:
        v = int(fy_start)
    except (TypeError, ValueError):
        v = 0
    if not 1 <= v <= 12 or v != fy_start:
        raise fail(PE104, "the fiscal year start month must be a whole number from 1 to 12",
                   expected="1 (January) ... 12 (December), e.g. 7 for a July start",
                   found=repr(fy_start), fix="Give the month the fiscal year starts in as "
                   "a number, e.g. 7 for July.", remedy="fiscal_start")
    return v


def _parse_uniques(values: Sequence[object]) -> _Unique:
    arr = pd.Series(np.asarray(values, dtype=object) if not isinstance(values, pd.Series) else values,
                    copy=False)
    codes, uniques = pd.factorize(arr, use_na_sentinel=True)
    text = pd.Series(uniques, dtype=object).astype(str).str.strip().str.upper()
    n = len(text)
    kind = np.zeros(n, dtype=np.int8)
    year = np.zeros(n, dtype=np.int64)
    sub = np.zeros(n, dtype=np.int64)
    sub2 = np.zeros(n, dtype=np.int64)
    remaining = np.ones(n, dtype=bool)
    if n > 2000:
        # fast path for long runs of distinct ISO dates (daily data): C-speed parse
        dt = pd.to_datetime(text, format="%Y-%m-%d", errors="coerce")
        hit = dt.notna().to_numpy() & (dt.dt.year.to_numpy() >= 1000)
        if hit.any():
            kind[hit] = DATE
            year[hit] = dt.dt.year.to_numpy()[hit]
            sub[hit] = dt.dt.month.to_numpy()[hit]
            sub2[hit] = dt.dt.day.to_numpy()[hit]
            remaining &= ~hit
    for k, pattern in _PATTERNS:
        if not remaining.any():
            break
        pos = np.flatnonzero(remaining)
        sub_text = text.iloc[pos]
        got = sub_text.str.extract("^(?:" + pattern + ")$")
        ok = got["y"].notna().to_numpy()
        if not ok.any():
            continue
        idx = pos[ok]
        g = got[ok]
        y = g["y"].astype(np.int64).to_numpy()
        if k == SLASH:
            kind[idx] = SLASH
            year[idx] = y
            sub[idx] = g["a"].astype(np.int64).to_numpy()
            sub2[idx] = g["b"].astype(np.int64).to_numpy()
        elif k == DATE:
            m = g["m"].astype(np.int64).to_numpy()
            d = g["d"].astype(np.int64).to_numpy()
            mm = np.clip(m, 1, 12)
            dim = pd.PeriodIndex.from_fields(year=y, month=mm, freq="M").days_in_month.to_numpy()
            valid = (m >= 1) & (m <= 12) & (d >= 1) & (d <= dim)
            kind[idx[valid]] = DATE
            year[idx] = y
            sub[idx] = m
            sub2[idx] = d
        elif k == YM:
            m = g["m"].astype(np.int64).to_numpy()
            two = g["m"].str.len().to_numpy() == 2
            fiscal_like = two & (m == (y + 1) % 100) & np.array(
                ["M" not in s for s in sub_text[ok]], dtype=bool)
            month_ok = (m >= 1) & (m <= 12)
            kind[idx] = np.where(month_ok & fiscal_like, AMBIG,
                                 np.where(month_ok, YM, np.where(fiscal_like, SPAN, BAD)))
            year[idx] = y
            sub[idx] = m
        elif k in (MY, YMNUM):
            m = g["m"].astype(np.int64).to_numpy()
            month_ok = (m >= 1) & (m <= 12)
            kind[idx] = np.where(month_ok, k, BAD)
            year[idx] = y
            sub[idx] = m
        elif k == SPAN:
            y2 = g["y2"].astype(np.int64).to_numpy()
            kind[idx] = np.where(y2 == y + 1, SPAN, BAD)
            year[idx] = y
        elif k in (QTR, FYQTR):
            kind[idx] = k
            year[idx] = y
            sub[idx] = g["q"].astype(np.int64).to_numpy()
        elif k == MNAME:
            kind[idx] = MNAME
            year[idx] = y
            sub[idx] = g["mon"].map(_MONTHS).astype(np.int64).to_numpy()
        else:  # YEAR, FYEAR
            kind[idx] = k
            year[idx] = y
        remaining[idx] = False
    return _Unique(np.asarray(uniques, dtype=object), np.asarray(codes), kind, year, sub, sub2)


def _resolve_slash(u: _Unique, kind: np.ndarray, present: np.ndarray,
                   where: dict[str, object]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Decide day/month order of ``31/01/2024`` or ``1/31/2024`` dates for a whole column.

    A first number above 12 means day first; a second above 12 means month first. With
    neither, dates all on the 1st of the month decide it (``1/3/2024`` next to
    ``1/4/2024`` is day first); otherwise the order is ambiguous (PE106)."""
    sl = (kind == SLASH) & present
    if not sl.any():
        return kind, u.sub, u.sub2
    kind, sub, days = kind.copy(), u.sub.copy(), u.sub2.copy()
    a, b = u.sub[sl], u.sub2[sl]
    if (a > 12).any() and (b > 12).any():
        order = None
    elif (a > 12).any():
        order = "dmy"
    elif (b > 12).any() or (a == b).all():
        order = "mdy"
    elif (a == 1).all():
        order = "dmy"
    elif (b == 1).all():
        order = "mdy"
    else:
        ex = [str(x) for x in u.uniques[sl][:3]]
        raise fail(PE106, "dates written with slashes could be day/month or month/day",
                   expected="ISO dates (2024-01-31), or dates whose day is above 12 somewhere",
                   found="dates such as " + ", ".join(repr(e) for e in ex),
                   fix="Write the dates as YYYY-MM-DD (or as 2024-01 for months).",
                   **where)  # type: ignore[arg-type]
    if order is None:
        kind[sl] = BAD
        return kind, sub, days
    month = a if order == "mdy" else b
    day = b if order == "mdy" else a
    pos = np.flatnonzero(sl)
    mm = np.clip(month, 1, 12)
    dim = pd.PeriodIndex.from_fields(year=u.year[sl], month=mm, freq="M").days_in_month.to_numpy()
    ok = (month >= 1) & (month <= 12) & (day >= 1) & (day <= dim)
    kind[pos] = np.where(ok, DATE, BAD)
    sub[pos] = month
    days[pos] = day
    return kind, sub, days


def _resolve_ambiguous(kind: np.ndarray, present: np.ndarray) -> np.ndarray:
    """Decide ``2011-12`` style labels for a whole column (``present``: uniques in use)."""
    kind = kind.copy()
    used = kind[present]
    n_ambig = int((used == AMBIG).sum())
    if n_ambig == 0:
        return kind
    plain_months = bool(np.isin(used, (YM,)).any())
    spans = bool((used == SPAN).any())
    fiscal = not plain_months and (spans or n_ambig >= 2)
    kind[kind == AMBIG] = SPAN if fiscal else YM
    return kind


# Frequency keys used internally: 'M', 'Q', 'A', 'FY', 'FQ'
_KIND_FREQ = {DATE: "M", YM: "M", MY: "M", YMNUM: "M", MNAME: "M", QTR: "Q", YEAR: "A", SPAN: "FY", FYEAR: "FY",
              FYQTR: "FQ"}


def _freq_key(kind: np.ndarray) -> np.ndarray:
    out = np.full(kind.shape, "", dtype=object)
    for k, f in _KIND_FREQ.items():
        out[kind == k] = f
    return out


def _needs_fy(kind_used: np.ndarray, fy_start: int | None, where: dict[str, object],
              examples: Sequence[str]) -> None:
    fiscal = np.isin(kind_used, (SPAN, FYEAR, FYQTR))
    if not fiscal.any():
        return
    if fy_start is None:
        raise fail(PE102, "fiscal-year labels need the month the fiscal year starts in",
                   expected="a fiscal start month (1-12), e.g. 7 when FY2025 runs July 2024 - June 2025",
                   found=f"fiscal labels such as {', '.join(repr(e) for e in examples[:3])} and no start month",
                   fix="Say which month the fiscal year starts in; realbasis never assumes "
                       "one.", remedy="fiscal_start", **where)  # type: ignore[arg-type]
    if fy_start == 1 and (kind_used == SPAN).any():
        raise fail(PE105, "labels like 2024-25 cross two calendar years, so the fiscal year cannot start in January",
                   expected="a fiscal start month from 2 to 12",
                   found=f"fiscal start month 1 with labels such as {examples[0]!r}",
                   fix="Give the real start month (e.g. 4 for April, 7 for July).",
                   **where)  # type: ignore[arg-type]


def _first_month_ordinal(kind: np.ndarray, year: np.ndarray, sub: np.ndarray,
                         fy_start: int) -> np.ndarray:
    """Monthly ordinal (months since 1970-01) of a month inside each labelled period."""
    y = year.copy()
    m = np.ones_like(year)
    s = fy_start
    month_like = np.isin(kind, (DATE, YM, MY, YMNUM, MNAME))
    m[month_like] = sub[month_like]
    q = kind == QTR
    m[q] = 3 * sub[q] - 2
    span = kind == SPAN  # first year y .. y+1 -> starts in month s of y
    m[span] = s
    fy = np.isin(kind, (FYEAR, FYQTR))  # labelled by end year
    y[fy] = year[fy] - (1 if s != 1 else 0)
    m[fy] = s
    fq = kind == FYQTR
    shift = m[fq] - 1 + 3 * (sub[fq] - 1)
    y[fq] = y[fq] + shift // 12
    m[fq] = shift % 12 + 1
    return (y - 1970) * 12 + (m - 1)


def _frequency(key: str, fy_start: int | None) -> Frequency:
    s = fy_start or 1
    return {"M": Frequency("M"), "Q": Frequency("Q"), "A": Frequency("A"),
            "FY": Frequency("FY", s), "FQ": Frequency("Q", s)}[key]


def date_frequency(ordinals: np.ndarray, fy_start: int | None) -> str:
    """For a column of ISO dates only: 'M', or 'Q'/'A'/'FY' when spacing says so."""
    u = np.unique(ordinals)
    if len(u) < 2:
        return "M"
    g = int(np.gcd.reduce(np.diff(u)))
    months = u % 12 + 1
    if g % 12 == 0:
        mset = set(months.tolist())
        if len(mset) == 1:
            (mon,) = mset
            if mon in (1, 12):
                return "A"
            if fy_start is not None and fy_start != 1 and mon in (fy_start, (fy_start - 2) % 12 + 1):
                return "FY"
    if g % 3 == 0:
        r = set((months % 3).tolist())
        if r in ({1}, {0}):
            return "Q"
    return "M"


def to_periods(ordinals: np.ndarray, key: str, fy_start: int | None) -> pd.PeriodIndex:
    monthly = pd.PeriodIndex(pd.arrays.PeriodArray(ordinals.astype("int64"),
                                                   dtype=pd.PeriodDtype("M")))
    freq = _frequency(key, fy_start)
    if freq.code == "M":
        return monthly
    return monthly.asfreq(freq.pandas_freq)


def parse_label(text: str, fy_start: int | None = None) -> tuple[pd.Period, Frequency]:
    """Parse one period label. Raises ``RealbasisError`` (PE101) when it is not a period,
    PE102 when a fiscal label comes without ``fy_start``. Results are cached."""
    fy_start = _check_fy_start(fy_start)
    if isinstance(text, str):
        return _parse_label_cached(text, fy_start)
    return _parse_label(text, fy_start)


@lru_cache(maxsize=4096)
def _parse_label_cached(text: str, fy_start: int | None) -> tuple[pd.Period, Frequency]:
    return _parse_label(text, fy_start)


def _parse_label(text: str, fy_start: int | None) -> tuple[pd.Period, Frequency]:
    if not isinstance(text, str) or not text.strip():
        raise fail(PE101, "a period label is empty or not text", expected=ACCEPTED,
                   found=repr(text), fix="Write the period, e.g. 2024-01, 2024Q1 or FY2025.")
    u = _parse_uniques([text])
    kind = u.kind.copy()
    if kind[0] == BAD:
        raise fail(PE101, f"{text.strip()!r} is not a period label this program reads",
                   expected=ACCEPTED, found=repr(text),
                   fix="Write the period in one of the accepted forms, e.g. 2024-01, 2024Q1, FY2025.")
    if kind[0] == AMBIG:
        kind[0] = YM
    kind, sub, _ = _resolve_slash(u, kind, np.ones(1, dtype=bool), {})
    if kind[0] == BAD:
        raise fail(PE101, f"{text.strip()!r} is not a date", expected=ACCEPTED, found=repr(text),
                   fix="Write the period in one of the accepted forms, e.g. 2024-01-31 or 2024-01.")
    u = _Unique(u.uniques, u.codes, kind, u.year, sub, u.sub2)
    _needs_fy(kind, fy_start, {}, [text])
    key = _freq_key(kind)[0]
    ords = _first_month_ordinal(kind, u.year, u.sub, fy_start or 1)
    idx = to_periods(ords, key, fy_start)
    return idx[0], _frequency(key, fy_start)


@dataclass(frozen=True)
class ParsedColumn:
    """Internal, for intake: per-value periods where frequencies may differ by value."""

    ordinals: np.ndarray  # monthly ordinal of a month inside the period, per value
    keys: np.ndarray  # frequency key per value ('' where bad or missing)
    kinds: np.ndarray  # label kind per value (BAD=0; -1 missing)
    fy_start: int | None
    days: np.ndarray | None = None  # day of the month of DATE labels (0 otherwise)


def parse_values(values: Sequence[object], fy_start: int | None = None, *,
                 where: dict[str, object] | None = None) -> ParsedColumn:
    """Parse labels value by value (vectorised over uniques) without insisting on a single
    frequency. Fiscal labels without ``fy_start`` raise PE102."""
    fy_start = _check_fy_start(fy_start)
    u = _parse_uniques(values)
    present = np.zeros(len(u.uniques), dtype=bool)
    present[u.codes[u.codes >= 0]] = True
    kind = _resolve_ambiguous(u.kind, present)
    kind, sub, day = _resolve_slash(u, kind, present, where or {})
    u = _Unique(u.uniques, u.codes, kind, u.year, sub, day)
    used = kind[present]
    ex = [str(x) for x in u.uniques[present & np.isin(kind, (SPAN, FYEAR, FYQTR))][:3]]
    _needs_fy(used, fy_start, where or {}, ex)
    keys_u = _freq_key(kind)
    ords_u = _first_month_ordinal(kind, u.year, u.sub, fy_start or 1)
    valid = u.codes >= 0
    kinds = np.where(valid, kind[np.where(valid, u.codes, 0)], -1).astype(np.int8)
    keys = np.where(valid, keys_u[np.where(valid, u.codes, 0)], "")
    ords = np.where(valid, ords_u[np.where(valid, u.codes, 0)], 0)
    keys = np.where(kinds == BAD, "", keys)
    days = np.where(valid & (kinds == DATE), u.sub2[np.where(valid, u.codes, 0)], 0)
    return ParsedColumn(ords.astype(np.int64), keys.astype(object), kinds, fy_start,
                        days.astype(np.int64))


def finish(parsed: ParsedColumn, mask: np.ndarray | None = None) -> tuple[pd.PeriodIndex, str]:
    """Periods for the values in ``mask`` (all good ones by default), which must share one
    frequency key. Returns (PeriodIndex over the masked values, key)."""
    sel = np.ones(len(parsed.keys), dtype=bool) if mask is None else mask
    good = sel & (parsed.keys != "")
    keys = set(parsed.keys[good].tolist())
    if len(keys) > 1:
        raise ValueError(f"mixed frequency keys {keys}")
    key = keys.pop() if keys else "M"
    ords = parsed.ordinals[sel]
    if key == "M" and good.any() and (parsed.kinds[good] == DATE).all():
        key = date_frequency(parsed.ordinals[good], parsed.fy_start)
    return to_periods(ords, key, parsed.fy_start), key


def frequency_of(key: str, fy_start: int | None) -> Frequency:
    return _frequency(key, fy_start)


FREQ_WORDS = {"M": "monthly", "Q": "quarterly", "A": "calendar years", "FY": "fiscal years",
               "FQ": "fiscal quarters"}


def parse_label_column(values: Sequence[str], fy_start: int | None = None, *,
                       file: str | None = None, column: str | None = None,
                       rows: Sequence[int] | None = None) -> LabelColumn:
    """Parse a whole column of period labels into one frequency.

    Values that do not parse (or are blank) are listed in ``bad`` and get NaT. Labels of
    more than one frequency raise PE103 naming the first row of each; fiscal labels
    without ``fy_start`` raise PE102. ``file``/``column``/``rows`` (1-based file row per
    value) only serve to locate those errors.
    """
    where: dict[str, object] = {"file": file, "column": column}
    values = list(values.tolist() if isinstance(values, pd.Series | pd.Index | np.ndarray) else values)
    parsed = parse_values(values, fy_start, where=where)
    good = parsed.keys != ""
    keys, first = np.unique(parsed.keys[good].astype(str), return_index=True)
    if len(keys) > 1:
        pos_good = np.flatnonzero(good)
        counts = {k: int((parsed.keys[good] == k).sum()) for k in keys}
        minority = min(keys, key=lambda k: counts[k])
        p = int(pos_good[first[list(keys).index(minority)]])
        row = int(rows[p]) if rows is not None else p + 1
        found = "; ".join(
            f"{FREQ_WORDS[k]}: {counts[k]} labels, first {values[int(pos_good[f])]!r}"
            for k, f in zip(keys, first, strict=True))
        raise fail(PE103, "the period labels mix frequencies", expected="one frequency per period column",
                   found=found,
                   fix="Keep one frequency per column (remove total or subtotal rows, or split the file).",
                   file=file, column=column, row=row)
    idx, key = finish(parsed)
    bad_pos = np.flatnonzero(~good)
    def _text(p: int) -> str:
        v = values[p]
        return "" if v is None or (isinstance(v, float) and np.isnan(v)) or v is pd.NA else str(v)

    bad = tuple((int(p), _text(int(p))) for p in bad_pos)
    if len(bad_pos):
        idx = pd.PeriodIndex(idx.array.copy())
        arr = idx.asi8.copy()
        arr[bad_pos] = np.iinfo(np.int64).min  # NaT
        idx = pd.PeriodIndex(pd.arrays.PeriodArray(arr, dtype=idx.dtype))
    return LabelColumn(idx, _frequency(key, parsed.fy_start), bad)


__all__ = ["ACCEPTED", "LabelColumn", "RealbasisError", "parse_label", "parse_label_column"]
