"""Index numbers from item prices and quantities (or expenditures).

Formulas keep their published names (ILO/IMF Consumer Price Index Manual 2004, ch. 15-19):

    Laspeyres  sum(p1 q0) / sum(p0 q0)
    Paasche    sum(p1 q1) / sum(p0 q1)
    Fisher     sqrt(Laspeyres * Paasche)
    Törnqvist  exp(sum(0.5 (s0 + s1) ln(p1 / p0)))        s = expenditure shares
    Walsh      sum(p1 sqrt(q0 q1)) / sum(p0 sqrt(q0 q1))
    Jevons     exp(mean(ln(p1 / p0)))                      unweighted
    Lowe       sum(p1 qb) / sum(p0 qb)                     qb: quantities of weight period b
    Young      sum(sb p1 / p0)                             sb: expenditure shares of period b

A comparison between two periods uses only the *matched* items: those with a positive
price in both periods and, for the weighted formulas, a quantity or expenditure in both
periods (Lowe/Young: a quantity or expenditure in the weight-reference period). Every
result reports how many items each comparison matched and how many it dropped (items
observed in either period but not usable in the comparison).

Fixed-base indexes compare every period with the base period directly; chained indexes
multiply period-to-period links and are then expressed with the base period = 100.

All the arithmetic is vectorised over a (periods x items) numpy array built once from
the long table, so thousands of items over many years take milliseconds.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

import numpy as np
import pandas as pd

from .errors import Problem, RealbasisError, fail, register, warn
from .model import Frequency, Series
from .periods import frequency_of_period
from .settings import Settings

Formula = Literal[
    "laspeyres", "paasche", "fisher", "tornqvist", "walsh", "jevons", "lowe", "young"
]
FORMULAS: tuple[Formula, ...] = (
    "laspeyres", "paasche", "fisher", "tornqvist", "walsh", "jevons", "lowe", "young"
)
# Formulas that need quantities (or expenditures) in both compared periods.
_BILATERAL_WEIGHTED = frozenset({"laspeyres", "paasche", "fisher", "tornqvist", "walsh"})
# Formulas whose weights come from one stated weight-reference period.
_WEIGHT_PERIOD = frozenset({"lowe", "young"})

FORMULA_NAMES: Mapping[str, str] = {
    "laspeyres": "Laspeyres", "paasche": "Paasche", "fisher": "Fisher",
    "tornqvist": "Törnqvist", "walsh": "Walsh", "jevons": "Jevons",
    "lowe": "Lowe", "young": "Young",
}

WS001 = register("WS001", "price table is missing a required column")
WS002 = register("WS002", "price table has an invalid price, quantity or expenditure")
WS003 = register("WS003", "price table repeats an item in a period")
WS004 = register("WS004", "unknown index formula or formula option")
WS005 = register("WS005", "base or weight period not in the price table")
WS006 = register("WS006", "chained index broken: a link matched no items")
WS007 = register("WS007", "comparison matched no items")
WS008 = register("WS008", "items dropped from comparisons (not matched)")
WS009 = register("WS009", "both quantity and expenditure given")
WS010 = register("WS010", "rolling-year index needs monthly or quarterly prices")
WS011 = register("WS011", "rolling-year base or weight period is not one year")
_ROLLING_CELLS = 1_000_000  # (window, season, item) cells gathered at once


# ---------------------------------------------------------------------------------------
# The price table


@dataclass(frozen=True)
class PriceTable:
    """Item prices (and quantities/expenditures) as (periods x items) float arrays.

    ``periods`` is the complete, gap-free range from the first to the last period in the
    data (periods with no observations are all-NaN rows). Missing cells are NaN.
    ``quantities`` and ``expenditures`` are both filled when either was given
    (expenditure = price * quantity; quantity = expenditure / price); both are None for
    a price-only table (Jevons only).
    """

    periods: pd.PeriodIndex
    items: pd.Index
    prices: np.ndarray
    quantities: np.ndarray | None
    expenditures: np.ndarray | None
    frequency: Frequency
    source: str | None = None
    warnings: tuple[Problem, ...] = ()

    @property
    def has_weights(self) -> bool:
        return self.quantities is not None

    def position(self, period: pd.Period | str) -> int:
        """Row of a period in the table; a coded error when it is not there."""
        p = _as_period(period, self.periods)
        if p is None or p not in self.periods:
            raise fail(
                WS005, "period not in the price table",
                expected=f"a period between {self.periods[0]} and {self.periods[-1]}",
                found=str(period), fix="Choose a period that the price file covers.",
                file=self.source,
            )
        return int(self.periods.get_loc(p))


def _as_period(value: pd.Period | str, periods: pd.PeriodIndex) -> pd.Period | None:
    if isinstance(value, pd.Period):
        try:
            return value.asfreq(periods.freq) if value.freqstr != periods.freqstr else value
        except (ValueError, TypeError):  # pragma: no cover - incompatible frequencies
            return None
    try:
        return pd.Period(str(value), freq=periods.freq)
    except (ValueError, TypeError):
        return None


def frequency_of(index: pd.PeriodIndex) -> Frequency:
    """The realbasis Frequency of a PeriodIndex (via :mod:`pipeline.periods`)."""
    return frequency_of_period(index[0])


def price_table(
    frame: pd.DataFrame,
    *,
    period: str = "period",
    item: str = "item",
    price: str = "price",
    quantity: str | None = "quantity",
    expenditure: str | None = "expenditure",
    source: str | None = None,
    row_offset: int = 2,
    rows: np.ndarray | None = None,
) -> PriceTable:
    """Build a :class:`PriceTable` from a long table ``period, item, price`` plus
    ``quantity`` or ``expenditure``.

    The period column must already hold ``pd.Period`` values of one frequency (the
    command line parses labels with :mod:`pipeline.labels` first). ``row_offset`` turns
    a 0-based frame position into the row number a spreadsheet user sees (2: header is
    row 1); ``rows`` instead gives the file row of every frame row. Errors carry file,
    row and column.
    """
    if rows is not None:
        rows = np.asarray(rows, dtype=int)

    def row_of(pos: int) -> int:
        return int(rows[pos]) if rows is not None else pos + row_offset

    cols = list(frame.columns)
    missing = [c for c in (period, item, price) if c not in cols]
    if missing:
        raise fail(
            WS001, f"price table lacks column(s) {', '.join(missing)}",
            expected=f"columns {period}, {item}, {price} and {quantity} or {expenditure}",
            found=", ".join(map(str, cols)) or "no columns",
            fix="Name the columns period, item, price and quantity (or expenditure).",
            file=source,
        )
    q_col = quantity if quantity in cols else None
    e_col = expenditure if expenditure in cols else None
    warnings: list[Problem] = []
    if q_col and e_col:
        warnings.append(warn(
            WS009, "both quantity and expenditure given; quantities are used",
            found=f"columns {q_col} and {e_col}",
            fix="Drop one of the two columns to silence this warning.", file=source,
        ))
        e_col = None

    per = frame[period]
    if not isinstance(per.dtype, pd.PeriodDtype):
        try:
            per = pd.Series(pd.PeriodIndex(per), index=frame.index)
        except (TypeError, ValueError) as exc:
            raise fail(
                WS001, "period column does not hold periods of one frequency",
                expected="pandas Period values of one frequency (e.g. 2024-01)",
                found=str(exc), fix="Parse the period labels before building the table.",
                file=source, column=period,
            ) from None
    pidx = pd.PeriodIndex(per)
    if pidx.hasnans:
        pos = int(np.flatnonzero(np.asarray(pidx.isna()))[0])
        raise fail(WS002, "period missing", expected="a period label on every row",
                   found="empty", fix="Fill in or delete the row.", file=source,
                   row=row_of(pos), column=period)

    p = pd.to_numeric(frame[price], errors="coerce").to_numpy(dtype=float)
    _check_values(frame, price, p, source, row_of, allow_zero=False)
    q = e = None
    if q_col:
        q = pd.to_numeric(frame[q_col], errors="coerce").to_numpy(dtype=float)
        _check_values(frame, q_col, q, source, row_of, allow_zero=True)
    elif e_col:
        e = pd.to_numeric(frame[e_col], errors="coerce").to_numpy(dtype=float)
        _check_values(frame, e_col, e, source, row_of, allow_zero=True)

    ordinals = np.asarray(pidx.asi8)
    first, last = int(ordinals.min()), int(ordinals.max())
    periods = pd.period_range(pd.Period(pidx[ordinals.argmin()]), periods=last - first + 1)
    row_code = ordinals - first
    item_code, items = pd.factorize(frame[item].astype(str), sort=True)
    n_t, n_i = len(periods), len(items)
    flat = row_code * n_i + item_code
    counts = np.bincount(flat, minlength=n_t * n_i)
    if counts.max(initial=0) > 1:
        dup = int(np.flatnonzero(pd.Series(flat).duplicated().to_numpy())[0])
        raise fail(
            WS003, "the same item appears twice in one period",
            expected="one row per period and item",
            found=f"item {items[item_code[dup]]!r} in {pidx[dup]} more than once",
            fix="Combine or delete the duplicate rows.", file=source,
            row=row_of(dup), column=item,
        )

    def grid(values: np.ndarray) -> np.ndarray:
        out = np.full(n_t * n_i, np.nan)
        out[flat] = values
        return out.reshape(n_t, n_i)

    prices = grid(p)
    quantities = expenditures = None
    if q is not None:
        quantities = grid(q)
        expenditures = prices * quantities
    elif e is not None:
        expenditures = grid(e)
        quantities = expenditures / prices
    return PriceTable(periods, pd.Index(items), prices, quantities, expenditures,
                      frequency_of(periods), source, tuple(warnings))


def _check_values(frame: pd.DataFrame, column: str, values: np.ndarray, source: str | None,
                  row_of: Callable[[int], int], *, allow_zero: bool) -> None:
    raw = frame[column]
    given = ~pd.isna(raw).to_numpy()
    bad_text = given & np.isnan(values)
    bad_sign = ~np.isnan(values) & ((values < 0) if allow_zero else (values <= 0))
    bad_inf = np.isinf(values)
    bad = bad_text | bad_sign | bad_inf
    if bad.any():
        pos = int(np.flatnonzero(bad)[0])
        rule = "a number >= 0" if allow_zero else "a number > 0"
        raise fail(
            WS002, f"invalid {column} value ({int(bad.sum())} row(s) in all)",
            expected=rule, found=repr(raw.iloc[pos]),
            fix=f"Correct the {column} (leave the cell empty when it is not known).",
            file=source, row=row_of(pos), column=column,
        )


def read_prices(source: str | Path | bytes, *, filename: str | None = None,
                sheet: str | None = None, fy_start: int | None = None,
                settings: Settings | None = None) -> PriceTable:
    """Read a long price file (CSV or XLSX: ``period, item, price`` and ``quantity`` or
    ``expenditure``; column names in any case) into a :class:`PriceTable`.

    The file is read by the intake's reader (:func:`pipeline.ingest.read_table`: encodings,
    delimiters, title lines, workbooks, size limits, number formats) and the period labels
    by :mod:`pipeline.labels`; errors name the file row and column.
    """
    from . import ingest, labels
    from .settings import load_settings

    settings = settings or load_settings()
    table = ingest.read_table(source, filename=filename, sheet=sheet, settings=settings)
    name = table.file
    header = {h.strip().casefold(): i for i, h in enumerate(table.header)}
    need = ["period", "item", "price"]
    missing = [c for c in need if c not in header]
    if missing:
        raise fail(WS001, f"price file lacks column(s) {', '.join(missing)}",
                   expected="columns period, item, price and quantity or expenditure",
                   found=", ".join(table.header), file=name, row=int(table.rows[0]) - 1,
                   fix="Name the columns period, item, price and quantity (or expenditure).")
    cells = table.cells
    per_col = cells[header["period"]].astype(str).str.strip()
    lab = labels.parse_label_column(per_col.tolist(), fy_start, file=name,
                                    column=table.header[header["period"]],
                                    rows=table.rows.tolist())
    if lab.bad:
        pos, text = lab.bad[0]
        raise fail(WS002, f"period label not understood ({len(lab.bad)} row(s) in all)",
                   expected=labels.ACCEPTED, found=repr(text), file=name,
                   row=int(table.rows[pos]), column=table.header[header["period"]],
                   fix="Write the period as e.g. 2024-01, 2024Q1 or 2024.")
    frame = pd.DataFrame({"period": lab.index,
                          "item": cells[header["item"]].astype(str).str.strip().to_numpy()})
    numeric = [c for c in ("price", "quantity", "expenditure") if c in header]
    decimal = ingest.detect_decimal(
        pd.concat([cells[header[c]] for c in numeric]).astype(str).str.strip(), table.delimiter)
    for c in numeric:
        values, bad = ingest.parse_numbers(cells[header[c]], decimal)
        if bad.any():
            pos = int(np.flatnonzero(bad)[0])
            raise fail(WS002, f"{c} is not a number ({int(bad.sum())} row(s) in all)",
                       expected="a number", found=repr(cells[header[c]].iloc[pos]), file=name,
                       row=int(table.rows[pos]), column=table.header[header[c]],
                       fix=f"Correct the {c}, or leave the cell empty when it is not known.")
        frame[c] = values
    return price_table(frame, source=name, rows=table.rows)


# ---------------------------------------------------------------------------------------
# The formulas, vectorised over comparisons (rows)


def _rowsum(x: np.ndarray, mask: np.ndarray) -> np.ndarray:
    return np.where(mask, x, 0.0).sum(axis=1)


def _ratio(num: np.ndarray, den: np.ndarray, n: np.ndarray) -> np.ndarray:
    with np.errstate(divide="ignore", invalid="ignore"):
        out = num / den
    return np.where((n > 0) & (den > 0), out, np.nan)


def compare(
    formula: Formula,
    p0: np.ndarray, p1: np.ndarray,
    q0: np.ndarray | None, q1: np.ndarray | None,
    *, qb: np.ndarray | None = None, eb: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Price index of period 1 relative to period 0, one per row, on matched items.

    Arrays are (comparisons x items); ``p0``/``q0`` may be a single broadcast row
    (fixed base). ``qb``/``eb`` are the weight-period quantities/expenditures for
    Lowe/Young. Returns (index ratios, matched item counts).
    """
    p0, p1 = np.broadcast_arrays(p0, p1)
    mask = (p0 > 0) & (p1 > 0)  # NaN compares False
    if formula in _BILATERAL_WEIGHTED:
        if q0 is None or q1 is None:
            raise fail(WS004, f"the {FORMULA_NAMES[formula]} formula needs quantities",
                       expected="a quantity or expenditure column",
                       found="prices only", fix="Add quantities or use Jevons.")
        q0, q1 = np.broadcast_arrays(q0, p1)[0], np.broadcast_arrays(q1, p1)[0]
        mask &= (q0 >= 0) & (q1 >= 0)
    elif formula in _WEIGHT_PERIOD:
        w = qb if formula == "lowe" else eb
        if w is None:
            raise fail(WS004, f"the {FORMULA_NAMES[formula]} formula needs weight-period "
                       "quantities", expected="a quantity or expenditure column",
                       found="prices only", fix="Add quantities or use Jevons.")
        w = np.broadcast_to(w, p1.shape)
        mask &= w >= 0
    n = mask.sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        if formula == "jevons":
            rel = np.log(np.where(mask, p1 / p0, 1.0))
            out = np.exp(rel.sum(axis=1) / n)
            return np.where(n > 0, out, np.nan), n
        if formula == "lowe":
            return _ratio(_rowsum(p1 * qb, mask), _rowsum(p0 * qb, mask), n), n
        if formula == "young":
            share_den = _rowsum(np.broadcast_to(eb, p1.shape), mask)
            return _ratio(_rowsum(eb * (p1 / p0), mask), share_den, n), n
        assert q0 is not None and q1 is not None
        if formula in ("laspeyres", "paasche", "fisher"):
            las = _ratio(_rowsum(p1 * q0, mask), _rowsum(p0 * q0, mask), n)
            if formula == "laspeyres":
                return las, n
            paa = _ratio(_rowsum(p1 * q1, mask), _rowsum(p0 * q1, mask), n)
            if formula == "paasche":
                return paa, n
            return np.sqrt(las * paa), n
        if formula == "walsh":
            w = np.sqrt(q0 * q1)
            return _ratio(_rowsum(p1 * w, mask), _rowsum(p0 * w, mask), n), n
        if formula == "tornqvist":
            e0, e1 = p0 * q0, p1 * q1
            s0 = np.where(mask, e0, 0.0) / _rowsum(e0, mask)[:, None]
            s1 = np.where(mask, e1, 0.0) / _rowsum(e1, mask)[:, None]
            logrel = np.log(np.where(mask, p1 / p0, 1.0))
            out = np.exp((0.5 * (s0 + s1) * logrel).sum(axis=1))
            return np.where(n > 0, out, np.nan), n
    raise fail(WS004, f"unknown index formula {formula!r}", expected=", ".join(FORMULAS),
               found=str(formula), fix="Choose one of the published formulas listed.")


# ---------------------------------------------------------------------------------------
# Fixed-base and chained indexes


@dataclass(frozen=True)
class IndexNumbers:
    """An index computed from a price table.

    ``values``: the index on the table's periods with the base period = 100.
    ``matched`` / ``dropped``: per period, items used / not usable in the comparison that
    produced that period's value (fixed base: base vs period; chained: previous period vs
    period; the first period of a chain and the base of a fixed-base index report the
    items usable in that period alone). ``links``: chained period-on-period ratios.
    """

    formula: Formula
    chained: bool
    base: pd.Period
    values: pd.Series
    matched: pd.Series
    dropped: pd.Series
    items: int
    weight_period: pd.Period | None = None
    links: pd.Series | None = None
    frequency: Frequency | None = None
    warnings: tuple[Problem, ...] = ()
    rolling_base: str | None = None  # base year of a rolling-year index (None otherwise)

    @property
    def name(self) -> str:
        kind = "chained" if self.chained else "fixed-base"
        if self.rolling_base is not None:
            return f"{FORMULA_NAMES[self.formula]} rolling-year price index, {kind}"
        return f"{FORMULA_NAMES[self.formula]} price index, {kind}"

    def labels(self) -> list[str]:
        if self.frequency is not None:
            return self.frequency.labels(self.values.index)  # type: ignore[arg-type]
        return [str(p) for p in self.values.index]

    def table(self) -> pd.DataFrame:
        """Tidy table: ``period, index, matched_items, dropped_items``."""
        return pd.DataFrame({
            "period": self.labels(),
            "index": self.values.to_numpy(),
            "matched_items": self.matched.to_numpy(),
            "dropped_items": self.dropped.to_numpy(),
        })

    def method_note(self) -> tuple[str, ...]:
        if self.rolling_base is not None:
            return self._rolling_note()
        base = self.frequency.label(self.base) if self.frequency else str(self.base)
        notes = [
            f"{self.name} computed from item prices"
            + (" and quantities." if self.formula != "jevons" else " (unweighted)."),
            f"Base period {base} = 100.",
            "Each comparison uses only items priced (and, for weighted formulas, with a "
            "quantity or expenditure) in both periods compared.",
        ]
        if self.chained:
            notes.append("Chained: period-to-period links multiplied together.")
        if self.weight_period is not None:
            wp = (self.frequency.label(self.weight_period) if self.frequency
                  else str(self.weight_period))
            notes.append(f"Weights from the weight-reference period {wp}.")
        return tuple(notes)

    def _rolling_note(self) -> tuple[str, ...]:
        per = "month" if self.frequency is None or self.frequency.code == "M" else "quarter"
        n = 12 if per == "month" else 4
        notes = [
            f"{self.name} (ILO/IMF Consumer Price Index Manual 2004 and Producer Price Index "
            "Manual 2004, ch. 22, rolling-year indexes for seasonal products): each item in "
            f"each calendar {per} is a separate item, and the value for a {per} compares the "
            f"{n} {per}s ending in it with the base year {self.rolling_base}.",
            f"Base year {self.rolling_base} = 100 (the value of its last {per}).",
            f"Each comparison uses only items priced (and, for weighted formulas, with a "
            f"quantity or expenditure) in the same calendar {per} of both years compared.",
        ]
        if self.chained:
            notes.append(f"Chained: each value is the value a year earlier times the "
                         f"comparison of the {n} {per}s ending in it with the {n} {per}s "
                         "ending a year earlier; years ending up to the end of the first year "
                         "after the base are compared with the base year directly.")
        if self.weight_period is not None:
            notes.append(f"Weights from the year {self.weight_period}.")
        return tuple(notes)

    def to_series(self, name: str | None = None, **fields: object) -> Series:
        if self.frequency is None:  # pragma: no cover - only exotic pandas freqs
            raise fail(WS004, "index frequency not supported",
                       expected="monthly, quarterly or annual periods",
                       found=str(self.values.index.freqstr), fix="Use M, Q or Y periods.")
        ref = self.rolling_base or self.frequency.label(self.base)
        return Series(name or self.name, self.values.astype(float), self.frequency,
                      kind="index", reference=ref, notes=self.method_note(), **fields)  # type: ignore[arg-type]


def _observed(table: PriceTable) -> np.ndarray:
    return ~np.isnan(table.prices)


def compute_index(
    table: PriceTable,
    formula: Formula | str,
    *,
    chained: bool = False,
    base: pd.Period | str | None = None,
    weight_period: pd.Period | str | None = None,
) -> IndexNumbers:
    """Compute a fixed-base or chained index number from a :class:`PriceTable`.

    ``base``: the period set to 100 (default: the first period); for a fixed-base index it
    is also the price-reference period every period is compared with. ``weight_period``
    (Lowe, Young only): the period whose quantities / expenditures weight the items
    (default: the base period). Lowe and Young are fixed-base only.
    """
    formula = _check_formula(table, formula, chained, weight_period)
    b = table.position(base) if base is not None else 0
    return _compute_fixed_or_chained(table, formula, chained, b, weight_period)


def _check_formula(table: PriceTable, formula: Formula | str, chained: bool,
                   weight_period: object) -> Formula:
    """The formula's canonical name, or a coded error when it cannot be computed here."""
    formula = str(formula).lower().replace("ö", "o")  # type: ignore[assignment]
    if formula not in FORMULAS:
        raise fail(WS004, f"unknown index formula {formula!r}", expected=", ".join(FORMULAS),
                   found=str(formula), fix="Choose one of the published formulas listed.")
    if formula in _WEIGHT_PERIOD and chained:
        raise fail(WS004, f"the {FORMULA_NAMES[formula]} index is a fixed-base index",
                   expected="a fixed-base index", found="chained",
                   fix="Compute it fixed-base, or use a chained Laspeyres, Fisher or "
                       "Törnqvist.", remedy="chained")
    if weight_period is not None and formula not in _WEIGHT_PERIOD:
        raise fail(WS004, "a weight-reference period applies to Lowe and Young only",
                   expected="lowe or young", found=str(formula),
                   fix="Drop the weight period or choose Lowe or Young.")
    if formula != "jevons" and not table.has_weights:
        raise fail(WS004, f"the {FORMULA_NAMES[formula]} formula needs quantities",
                   expected="a quantity or expenditure column", found="prices only",
                   fix="Add quantities or expenditures, or use Jevons.", file=table.source)
    return formula  # type: ignore[return-value]


def _compute_fixed_or_chained(table: PriceTable, formula: Formula, chained: bool, b: int,
                              weight_period: pd.Period | str | None) -> IndexNumbers:
    wp = table.position(weight_period) if weight_period is not None else b
    P, Q, E = table.prices, table.quantities, table.expenditures
    observed = _observed(table)
    qb = Q[wp][None, :] if Q is not None and formula == "lowe" else None
    eb = E[wp][None, :] if E is not None and formula == "young" else None
    warnings: list[Problem] = list(table.warnings)
    n_t = len(table.periods)

    if not chained:
        ratio, matched = compare(formula, P[b][None, :], P,  # type: ignore[arg-type]
                                 None if Q is None else Q[b][None, :], Q, qb=qb, eb=eb)
        ratio[b] = 1.0
        seen = observed | observed[b][None, :]
        links = None
    else:
        link, n_link = compare(formula, P[:-1], P[1:],  # type: ignore[arg-type]
                               None if Q is None else Q[:-1],
                               None if Q is None else Q[1:])
        broken = np.flatnonzero(~np.isfinite(link))
        if len(broken):
            k = int(broken[0]) + 1
            raise fail(
                WS006, "chained index broken: no item matched between two periods",
                expected="at least one item priced (with quantity) in both periods",
                found=f"{table.periods[k - 1]} to {table.periods[k]}: 0 items matched",
                fix="Fill the gap in the price file, or compute a fixed-base index.",
                file=table.source, period=str(table.periods[k]),
            )
        chain = np.concatenate([[1.0], np.cumprod(link)])
        ratio = chain / chain[b]
        first_usable = _usable(formula, P[0], None if Q is None else Q[0])
        matched = np.concatenate([[first_usable], n_link])
        seen = np.vstack([observed[:1], observed[1:] | observed[:-1]])
        links = pd.Series(np.concatenate([[np.nan], link]), index=table.periods, name="link")
    dropped = seen.sum(axis=1) - matched

    empty = np.flatnonzero(~np.isfinite(ratio))
    if len(empty):
        warnings.append(warn(
            WS007, f"{len(empty)} period(s) matched no item with the base period",
            found=", ".join(str(table.periods[i]) for i in empty[:5]),
            fix="Those periods are left empty; check the price file.", file=table.source,
        ))
    if dropped.sum() > 0:
        worst = int(np.argmax(dropped))
        warnings.append(warn(
            WS008, f"items were dropped from {int((dropped > 0).sum())} of {n_t} "
            "comparisons (not priced, or without quantity, in both periods)",
            found=f"most in {table.periods[worst]}: {int(dropped[worst])} dropped, "
            f"{int(matched[worst])} matched",
            fix="Matched-item comparisons are the standard treatment; impute missing "
            "prices beforehand if you prefer another.", file=table.source,
        ))
    return IndexNumbers(
        formula=formula,  # type: ignore[arg-type]
        chained=chained, base=table.periods[b],
        values=pd.Series(100.0 * ratio, index=table.periods, name="index"),
        matched=pd.Series(matched.astype(int), index=table.periods, name="matched_items"),
        dropped=pd.Series(dropped.astype(int), index=table.periods, name="dropped_items"),
        items=len(table.items),
        weight_period=table.periods[wp] if formula in _WEIGHT_PERIOD else None,
        links=links, frequency=table.frequency, warnings=tuple(warnings),
    )


def _usable(formula: str, p: np.ndarray, q: np.ndarray | None) -> int:
    ok = p > 0
    if formula != "jevons" and q is not None:
        ok &= q >= 0
    return int(ok.sum())


# ---------------------------------------------------------------------------------------
# Rolling-year indexes for seasonal items


def _year_rows(table: PriceTable, year: object, what: str,
               fy_start: int | None) -> tuple[int, str]:
    """First row of a base or weight year (a calendar or fiscal year, or any run of one
    year of periods) in the table; coded errors when it is not one year of the table."""
    from .periods import parse_span

    n = table.frequency.periods_per_year
    span = parse_span(year if isinstance(year, str) else str(year), fy_start)  # type: ignore[arg-type]
    try:
        periods = span.periods_in(table.frequency)
    except RealbasisError:
        periods = pd.PeriodIndex([], freq=table.periods.freq)
    if len(periods) != n:
        raise fail(WS011, f"the {what} of a rolling-year index must be one year",
                   expected=f"a year of {n} consecutive periods, e.g. 2024 or FY2025",
                   found=span.label, file=table.source, period=span.label,
                   fix=f"Give the {what} as a year (or a range of {n} consecutive periods).")
    start = periods[0]
    if start not in table.periods or periods[-1] not in table.periods:
        raise fail(WS005, f"{what} {span.label} not in the price table",
                   expected=f"a year between {table.periods[0]} and {table.periods[-1]}",
                   found=span.label, file=table.source, period=span.label,
                   fix="Choose a year that the price file covers.")
    return int(table.periods.get_loc(start)), span.label


def _default_base_row(table: PriceTable) -> tuple[int, str]:
    """The first calendar year the table covers fully (its first January or Q1)."""
    first = table.periods.asfreq("M", how="start").month
    jan = np.flatnonzero(np.asarray(first) == 1)
    n = table.frequency.periods_per_year
    if not len(jan) or jan[0] + n > len(table.periods):
        raise fail(WS011, "the price table holds no complete calendar year to take as base",
                   expected=f"at least one calendar year of {n} periods",
                   found=f"{table.periods[0]} to {table.periods[-1]}", file=table.source,
                   fix="Give the base year (a fiscal year, or any run of one year of "
                   "periods), or a longer price file.")
    return int(jan[0]), f"{table.periods[int(jan[0])].year:04d}"


def compute_rolling_year(
    table: PriceTable,
    formula: Formula | str,
    *,
    chained: bool = False,
    base: object = None,
    weight_period: object = None,
    fy_start: int | None = None,
) -> IndexNumbers:
    """Rolling-year (moving-year) index for seasonal items (ILO/IMF CPI Manual 2004 and
    PPI Manual 2004, ch. 22).

    Each item in each calendar month (quarter, for quarterly prices) is a separate item.
    The value for period t compares the year of periods ending in t with the base year:
    directly (fixed base), or with ``chained=True`` as the value a year earlier times the
    comparison of the year ending in t with the year ending a year earlier -- years
    ending up to the end of the first year after the base are compared with the base
    directly. ``base``: a year (``2024``, ``FY2025`` with ``fy_start``, or a range of one
    year of periods); default the first calendar year in the table. The base year's last
    period is 100. ``weight_period`` (Lowe, Young): the year whose quantities or
    expenditures weight the items (default the base year). Values start with the first
    complete year of data; matched items count (item, month) pairs.
    """
    formula = _check_formula(table, formula, chained, weight_period)
    n = table.frequency.periods_per_year
    if n not in (4, 12):
        raise fail(WS010, "rolling-year indexes need monthly or quarterly prices",
                   expected="monthly or quarterly periods",
                   found=table.frequency.describe(), file=table.source,
                   fix="Give monthly or quarterly prices (a year has no seasons within it).")
    n_t = len(table.periods)
    if n_t < n:
        raise fail(WS011, "the price table is shorter than one year",
                   expected=f"at least {n} periods", found=f"{n_t} period(s)",
                   file=table.source, fix="Give at least one year of prices.")
    b0, base_label = (_year_rows(table, base, "base year", fy_start) if base is not None
                      else _default_base_row(table))
    w0, weight_label = (_year_rows(table, weight_period, "weight year", fy_start)
                        if weight_period is not None else (b0, base_label))
    season = np.arange(n)
    ends = np.arange(n - 1, n_t)  # last row of each complete year window
    offsets = (((ends - b0) % n)[:, None] - season[None, :]) % n
    rows = ends[:, None] - offsets  # (windows, seasons): row of season s in window w

    n_w = len(ends)
    # windows are gathered a chunk at a time so memory stays near a few million cells
    chunk = max(1, _ROLLING_CELLS // max(1, n * len(table.items)))

    def windows(a: np.ndarray | None, w: np.ndarray) -> np.ndarray | None:
        return None if a is None else a[rows[w]].reshape(len(w), -1)

    def year(a: np.ndarray | None, start: int) -> np.ndarray | None:
        return None if a is None else a[start:start + n].reshape(1, -1)

    prices, quantities = table.prices, table.quantities
    p_b, q_b = year(prices, b0), year(quantities, b0)
    qw = year(quantities, w0) if formula == "lowe" else None
    ew = year(table.expenditures, w0) if formula == "young" else None
    seen_b = ~np.isnan(p_b)  # type: ignore[arg-type]
    ratio = np.full(n_w, np.nan)
    matched = np.zeros(n_w, dtype=int)
    seen = np.zeros(n_w, dtype=int)  # (item, season) pairs observed in either year
    for a in range(0, n_w, chunk):
        w = np.arange(a, min(n_w, a + chunk))
        pw = windows(prices, w)
        ratio[w], matched[w] = compare(formula, p_b, pw, q_b,  # type: ignore[arg-type]
                                       windows(quantities, w), qb=qw, eb=ew)
        seen[w] = (~np.isnan(pw) | seen_b).sum(axis=1)  # type: ignore[arg-type]
    ratio[int(np.flatnonzero(ends == b0 + n - 1)[0])] = 1.0
    links = None
    if chained:
        link = np.full(n_w, np.nan)  # link[w]: the window ending a year before w -> w
        n_link = np.zeros(n_w, dtype=int)
        seen_link = np.zeros(n_w, dtype=int)
        for a in range(n, n_w, chunk):
            w = np.arange(a, min(n_w, a + chunk))
            p0, p1 = windows(prices, w - n), windows(prices, w)
            link[w], n_link[w] = compare(formula, p0, p1,  # type: ignore[arg-type]
                                         windows(quantities, w - n), windows(quantities, w))
            seen_link[w] = (~np.isnan(p0) | ~np.isnan(p1)).sum(axis=1)  # type: ignore[arg-type]
        first_chained = int(np.searchsorted(ends, b0 + 2 * n))  # first window past base+1
        for w in range(first_chained, n_w):
            if not np.isfinite(link[w]):
                raise fail(
                    WS006, "chained rolling-year index broken: no item matched between a "
                    "year and the year before", expected="at least one item priced (with "
                    "quantity) in the same season of both years",
                    found=f"year ending {table.periods[ends[w] - n]} to year ending "
                    f"{table.periods[ends[w]]}: 0 items matched", file=table.source,
                    period=str(table.periods[ends[w]]),
                    fix="Fill the gap in the price file, or compute a fixed-base index.")
            ratio[w] = ratio[w - n] * link[w]
            matched[w] = n_link[w]
            seen[w] = seen_link[w]
        links = pd.Series(link, index=table.periods[ends], name="link")
    dropped = seen - matched
    warnings: list[Problem] = list(table.warnings)
    empty = np.flatnonzero(~np.isfinite(ratio))
    labels = table.periods[ends]
    if len(empty):
        warnings.append(warn(
            WS007, f"{len(empty)} year(s) matched no item with the base year",
            found=", ".join(str(labels[i]) for i in empty[:5]),
            fix="Those periods are left empty; check the price file.", file=table.source))
    if dropped.sum() > 0:
        worst = int(np.argmax(dropped))
        warnings.append(warn(
            WS008, f"items were dropped from {int((dropped > 0).sum())} of {len(ends)} "
            "rolling-year comparisons (not priced, or without quantity, in the same season of "
            "both years)", found=f"most in the year ending {labels[worst]}: "
            f"{int(dropped[worst])} dropped, {int(matched[worst])} matched",
            fix="Matched-item comparisons are the standard treatment; items bought only in "
            "some seasons count in those seasons.", file=table.source))
    return IndexNumbers(
        formula=formula, chained=chained, base=table.periods[b0 + n - 1],
        values=pd.Series(100.0 * ratio, index=labels, name="index"),
        matched=pd.Series(np.asarray(matched).astype(int), index=labels, name="matched_items"),
        dropped=pd.Series(np.asarray(dropped).astype(int), index=labels, name="dropped_items"),
        items=len(table.items),
        weight_period=weight_label if formula in _WEIGHT_PERIOD else None,  # type: ignore[arg-type]
        links=links, frequency=table.frequency, warnings=tuple(warnings),
        rolling_base=base_label,
    )


def chain_links(links: pd.Series, *, reference: float = 100.0) -> pd.Series:
    """Chain period-on-period links (previous period = 100) into an index level series.

    The period before the first link is set to ``reference``; the result carries one
    more period than ``links`` (the starting period). Missing links raise WS006.
    """
    if not isinstance(links.index, pd.PeriodIndex):
        raise TypeError("links need a PeriodIndex")
    vals = links.to_numpy(dtype=float)
    bad = np.flatnonzero(~(vals > 0))
    if len(bad):
        raise fail(WS006, "missing or non-positive link", expected="links > 0",
                   found=f"{links.iloc[bad[0]]!r} at {links.index[bad[0]]}",
                   fix="Fill in the link.", period=str(links.index[bad[0]]))
    start = links.index[0] - 1
    idx = pd.period_range(start, periods=len(links) + 1)
    levels = reference * np.concatenate([[1.0], np.cumprod(vals / 100.0)])
    return pd.Series(levels, index=idx, name=links.name)
