"""Totals of separately deflated parts, and contributions to real growth.

Each part (a segment, a programme, a line of spending) is deflated by its own deflator
through :func:`pipeline.deflate.deflate`; the parts are then put together in one of three
ways (``chain``):

``none`` — the additive total: the sum of the parts' real values, every part at the
    prices of the base period (constant-dollar parts add up). Contributions to real
    growth are share-weighted part growth, (x_i(t) - x_i(t-1)) / X(t-1).
``fisher`` — chain-linked period to period with the Fisher volume index of the parts,
    each part's price being its deflator as used (for aggregated periods the implicit
    deflator nominal / real). For one base period B the chained total is
    nominal total(B) x Q(t) / Q(B); for a base range it is scaled so that its average over
    the range equals the average of the nominal total there (the reference-year
    convention of national accounts: chained-dollar values of the reference year average
    to its current-dollar value). Contributions are the national accounts' additive
    decomposition of the Fisher index (the BEA formula; Reinsdorf, Diewert and Ehemann
    2002):  C_i = (p_i,t-1 + p_i,t / P_F) (x_i,t - x_i,t-1) / sum_j (p_j,t-1 + p_j,t / P_F) x_j,t-1
    with P_F the Fisher price index from t-1 to t.
``annual`` — annual chain-linking with the annual-overlap method (IMF Quarterly National
    Accounts Manual 2017, ch. 8): the periods of year y are valued at the average prices
    of year y-1 and linked at the annual average of year y-1; the first year is valued at
    its own average prices. Contributions within a year are the part's change at those
    prices; across the year boundary the change is split at the annual average of year
    y-1 (before it at the prices year y-1 was compiled at, after it at year y's), so they
    add up exactly as well.

Chained parts do not add up to a chained total. The difference, total minus the sum of the
parts' real values, is the **residual** line; it is always shown (0 for ``none``).

Contributions over several periods (year on year, and the annual basis: the growth of the
annual sums, or for stocks of the year-end values) add up the period contributions in the
total's own units over the span and divide by the total at its start, so they add up
exactly to the total's growth too; for the additive total this is the same as the direct
share-weighted formula.

The core works on 2-D arrays (rows = periods, columns = parts): :func:`fisher_chain` and
:func:`annual_overlap_chain` are vectorised over periods and parts.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from functools import cached_property
from typing import Literal

import numpy as np
import pandas as pd

from .deflate import DF002, DF003, DF005, DF006, DeflationResult, _fmt_names, deflate
from .errors import Problem, RealbasisError, fail, register, warn
from .growth import lagged_ratio_wide
from .model import ANNUAL, STATUSES, Frequency, Kind, Series
from .periods import Span, relation

DF201 = register("DF201", "a part of the total has no deflator paired with it")
DF202 = register("DF202", "a pair names a series or deflator that is not there")
DF203 = register("DF203", "the parts of a total are in different units")
DF204 = register("DF204", "the parts of a total are of different kinds")
DF205 = register("DF205", "unknown way of putting the parts together")
DF206 = register("DF206", "a part is named like a line of the total")
DF207 = register("DF207", "the parts have no period in common")
DF208 = register("DF208", "a chained total cannot bridge a gap in a part")
DF209 = register("DF209", "the chained total is undefined")
DF210 = register("DF210", "the base cannot reference the chained total")
DF211 = register("DF211", "the total covers only the periods every part covers")
DF212 = register("DF212", "the first year of an annually chained total is incomplete")
DF213 = register("DF213", "unknown basis for growth and contributions")

Chain = Literal["none", "fisher", "annual"]
Basis = Literal["period", "yoy", "annual"]
CHAINS: tuple[Chain, ...] = ("none", "fisher", "annual")
BASES: tuple[Basis, ...] = ("period", "yoy", "annual")
CHAIN_WORDS: Mapping[str, str] = {
    "none": "sum of the parts at base-period prices (additive)",
    "fisher": "chain-linked Fisher, period to period",
    "annual": "annually chain-linked, annual-overlap method",
}
BASIS_WORDS: Mapping[str, str] = {
    "period": "on the period before",
    "yoy": "on the same period a year earlier",
    "annual": "annual totals on the year before",
}
TOTAL = "total"
RESIDUAL = "residual"
TABLE_COLUMNS: tuple[str, ...] = (
    "period", "component", "nominal", "real", "real_growth_pct", "contribution_pp",
)
_STATUS_ARR = np.array(STATUSES, dtype=object)


# --------------------------------------------------------------------------- array core


@dataclass(frozen=True)
class Chained:
    """A total built from parts, as arrays over periods.

    ``level`` (T,): the total (a chain index for the cores, the total's real value once
    scaled). ``changes`` (T, N): each part's share of the change level(t) - level(t-1),
    in the units of ``level``; rows add up to that change exactly (up to rounding).
    Row 0 is NaN.
    """

    level: np.ndarray
    changes: np.ndarray

    def scaled(self, factor: float) -> Chained:
        return Chained(self.level * factor, self.changes * factor)


def additive_total(real: np.ndarray) -> Chained:
    """The sum of the parts; changes are the parts' own changes."""
    x = np.asarray(real, dtype=float)
    level = x.sum(axis=1)
    changes = np.full(x.shape, np.nan)
    changes[1:] = x[1:] - x[:-1]
    return Chained(level, changes)


def fisher_chain(price: np.ndarray, real: np.ndarray) -> Chained:
    """Chain-linked Fisher volume index of the parts (level 1 in the first period) and the
    additive (BEA) decomposition of each link.

    ``price`` (T, N): each part's price relative (its deflator as used / 100); ``real``
    (T, N): its real value (the quantity at base-period prices). Link t:
    L = sum p0 x1 / sum p0 x0, P = sum p1 x1 / sum p1 x0, Q_F = sqrt(L P); Fisher price
    P_F = (sum p1 x1 / sum p0 x0) / Q_F; contribution of part i to Q_F - 1:
    (p_i0 + p_i1 / P_F)(x_i1 - x_i0) / sum_j (p_j0 + p_j1 / P_F) x_j0.
    Links that are not positive give NaN (the caller reports them)."""
    p = np.asarray(price, dtype=float)
    x = np.asarray(real, dtype=float)
    t_n = x.shape[0]
    level = np.full(t_n, np.nan)
    changes = np.full(x.shape, np.nan)
    if t_n == 0:
        return Chained(level, changes)
    level[0] = 1.0
    if t_n == 1:
        return Chained(level, changes)
    p0, p1, x0, x1 = p[:-1], p[1:], x[:-1], x[1:]
    v00 = np.einsum("ij,ij->i", p0, x0)
    v01 = np.einsum("ij,ij->i", p0, x1)
    v10 = np.einsum("ij,ij->i", p1, x0)
    v11 = np.einsum("ij,ij->i", p1, x1)
    with np.errstate(all="ignore"):
        lq = v01 / v00
        pq = v11 / v10
        qf = np.sqrt(lq * pq)
        qf[~((v00 > 0) & (v10 > 0) & (lq > 0) & (pq > 0))] = np.nan
        inv_pf = qf * v00 / v11  # 1 / P_F, P_F = (V1 / V0) / Q_F
        level[1:] = np.cumprod(qf)
        # (p0 + p1 / P_F)(x1 - x0) / sum (p0 + p1 / P_F) x0, times the level before
        w = p1 * inv_pf[:, None]
        w += p0
        w *= x1 - x0
        w *= (level[:-1] / (v00 + v10 * inv_pf))[:, None]
    changes[1:] = w
    return Chained(level, changes)


def year_groups(periods: pd.PeriodIndex, year: Frequency) -> tuple[np.ndarray, np.ndarray,
                                                                  pd.PeriodIndex]:
    """Start and end rows of each (contiguous) year of ``periods`` and the years."""
    codes = periods.asfreq(year.pandas_freq, how="end")
    o = np.asarray(codes.asi8)
    if len(o) == 0:
        return np.zeros(0, dtype=np.intp), np.zeros(0, dtype=np.intp), codes
    brk = np.flatnonzero(np.diff(o) != 0) + 1
    starts = np.concatenate(([0], brk)).astype(np.intp)
    ends = np.concatenate((brk, [len(o)])).astype(np.intp)
    return starts, ends, codes[starts]


def annual_overlap_chain(price: np.ndarray, real: np.ndarray, starts: np.ndarray) -> Chained:
    """Annually chain-linked volume of the parts with the annual-overlap method.

    ``starts``: first row of each year (rows are contiguous periods). Year k's periods are
    valued at the average prices of year k-1 (year 0 at its own): A(t) = sum_i pi_k,i x_i(t)
    with pi_k = pbar_(k-1), pbar = sum(p x) / sum(x) over the year. The index is
    level(t) = A(t) x Qbar_(k-1) / Vbar_(k-1) (Vbar: the year's average value at its own
    prices, Qbar: the year's average of the index), so each year's average equals the
    annual chain-linked Laspeyres volume. Changes across a year boundary are split at the
    annual average of the previous year."""
    p = np.asarray(price, dtype=float)
    x = np.asarray(real, dtype=float)
    t_n = x.shape[0]
    if t_n == 0:
        return Chained(np.zeros(0), np.zeros(x.shape))
    starts = np.asarray(starts, dtype=np.intp)
    ends = np.append(starts[1:], t_n)
    n_k = (ends - starts).astype(float)
    v = p * x
    sum_v = np.add.reduceat(v, starts, axis=0)
    sum_x = np.add.reduceat(x, starts, axis=0)
    mean_p = np.add.reduceat(p, starts, axis=0) / n_k[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        pbar = np.where(sum_x != 0, sum_v / sum_x, mean_p)
    xbar = sum_x / n_k[:, None]
    vbar = sum_v.sum(axis=1) / n_k
    pi = np.vstack([pbar[:1], pbar[:-1]])  # prices each year is valued at
    prev_v = np.concatenate([vbar[:1], vbar[:-1]])
    year = np.repeat(np.arange(len(starts)), (ends - starts))
    a = np.einsum("ij,ij->i", pi[year], x)
    abar = np.add.reduceat(a, starts) / n_k
    with np.errstate(divide="ignore", invalid="ignore"):
        qbar = np.cumprod(abar / prev_v)
        kfac = np.concatenate([[1.0], qbar[:-1]]) / prev_v
    weight = kfac[year][:, None] * pi[year]  # (T, N): value of one unit of x_i at t
    level = np.einsum("ij,ij->i", weight, x)
    changes = np.full(x.shape, np.nan)
    if t_n > 1:
        anchor = x[:-1].copy()  # the point each change is split at
        first = starts[1:]  # rows that open a year (after the first)
        anchor[first - 1] = xbar[:-1]  # previous year's average
        changes[1:] = weight[1:] * (x[1:] - anchor) + weight[:-1] * (anchor - x[:-1])
    with np.errstate(invalid="ignore"):
        bad = ~(np.isfinite(level) & (level > 0))
    level = np.where(bad, np.nan, level)
    return Chained(level, changes)


# --------------------------------------------------------------------------- result


@dataclass(frozen=True)
class _Basis:
    labels: np.ndarray  # (B,) period labels
    nominal: np.ndarray  # (B, N)
    real: np.ndarray  # (B, N)
    total_nominal: np.ndarray  # (B,)
    total_real: np.ndarray  # (B,)
    part_growth: np.ndarray  # (B, N) fractions
    total_growth: np.ndarray  # (B,)
    contributions: np.ndarray  # (B, N) fractions of the total's level at the start
    part_status: np.ndarray  # (B, N) int8
    total_status: np.ndarray  # (B,) int8


@dataclass(frozen=True, eq=False)
class TotalResult:
    """A total of separately deflated parts, with its residual and contributions.

    Axes: ``periods`` (T, at ``frequency``) and ``part_names`` (N). ``nominal``, ``real``,
    ``price`` (the deflator as used, base = 100), ``part_status`` (int8 ranks) are (T, N);
    ``total_nominal``, ``total_real``, ``total_status`` are (T,); ``changes`` (T, N) is each
    part's share of the total's change from the period before, in the total's units.
    ``year`` is the frequency of the years used for annual links and the annual basis.
    """

    chain: Chain
    base: Span
    frequency: Frequency
    year: Frequency
    periods: pd.PeriodIndex
    part_names: tuple[str, ...]
    deflator_names: tuple[str, ...]  # the deflator of each part
    kind: str
    unit: str | None
    nominal: np.ndarray
    real: np.ndarray
    price: np.ndarray
    part_status: np.ndarray
    total_nominal: np.ndarray
    total_real: np.ndarray
    total_status: np.ndarray
    changes: np.ndarray
    method: tuple[str, ...]
    warnings: tuple[Problem, ...] = ()
    deflators_used: tuple[Series, ...] = ()

    # -- words -----------------------------------------------------------------------
    @property
    def base_label(self) -> str:
        return self.base.label

    @property
    def dollars_label(self) -> str:
        """'constant 2024 dollars' (additive) or 'chained 2024 dollars' (chained)."""
        word = "constant" if self.chain == "none" else "chained"
        return f"{word} {self.base_label} dollars"

    @property
    def chain_words(self) -> str:
        return CHAIN_WORDS[self.chain]

    @property
    def pairs(self) -> tuple[tuple[str, str], ...]:
        return tuple(zip(self.part_names, self.deflator_names, strict=True))

    def method_note(self) -> tuple[str, ...]:
        """What was done, in words: the deflation, the way the total is formed, why a
        residual exists, how contributions are computed."""
        return self.method

    @cached_property
    def period_labels(self) -> np.ndarray:
        return np.array(self.frequency.labels(self.periods), dtype=object)

    @property
    def worst_status(self) -> str:
        ranks = [int(a.max()) for a in (self.part_status, self.total_status) if a.size]
        return str(_STATUS_ARR[max(ranks)]) if ranks else "final"

    @property
    def residual(self) -> np.ndarray:
        """(T,) total - sum of the parts' real values (0 for the additive total)."""
        if self.chain == "none":
            return np.where(np.isnan(self.total_real), np.nan, 0.0)
        return self.total_real - self.real.sum(axis=1)

    # -- bases -----------------------------------------------------------------------
    def _check_basis(self, basis: str) -> None:
        if basis not in BASES:
            raise fail(DF213, f"unknown basis {basis!r} for growth and contributions",
                       expected=" | ".join(BASES), found=repr(basis),
                       fix="Choose period (on the period before), yoy (on the same period "
                       "a year earlier) or annual (annual totals).")

    @cached_property
    def _period_basis(self) -> _Basis:
        return self._lagged(1)

    @cached_property
    def _yoy_basis(self) -> _Basis:
        return self._lagged(self.frequency.periods_per_year)

    def _lagged(self, lag: int) -> _Basis:
        x, big_x = self.real, self.total_real
        pg = lagged_ratio_wide(x, lag)
        tg = lagged_ratio_wide(big_x[:, None], lag)[:, 0]
        contrib = np.full(x.shape, np.nan)
        if len(big_x) > lag:
            with np.errstate(divide="ignore", invalid="ignore"):
                if self.chain == "none":
                    change = x[lag:] - x[:-lag]
                else:
                    cum = np.nancumsum(np.nan_to_num(self.changes, nan=0.0), axis=0)
                    change = cum[lag:] - cum[:-lag]
                contrib[lag:] = change / big_x[:-lag, None]
                prev = big_x[:-lag]
                contrib[lag:][~(prev > 0)] = np.nan
        return _Basis(self.period_labels, self.nominal, x, self.total_nominal, big_x, pg, tg,
                      contrib, self.part_status, self.total_status)

    @cached_property
    def _annual_basis(self) -> _Basis:
        if self.frequency.periods_per_year == 1:
            return self._period_basis
        m = self.frequency.periods_per_year
        starts, ends, years = year_groups(self.periods, self.year)
        n = ends - starts
        # complete years: every period (flows); the year's last period (stocks)
        last_rows = ends - 1
        year_end = np.asarray(self.periods[last_rows].asfreq("M", how="end").asi8) == \
            np.asarray(years.asfreq("M", how="end").asi8) if len(starts) else np.zeros(0, bool)
        complete = (n == m) if self.kind != "stock" else year_end
        stock = self.kind == "stock"

        def agg(a: np.ndarray) -> np.ndarray:
            if stock:
                return a[last_rows]
            return np.add.reduceat(a, starts, axis=0) if len(starts) else a[:0]

        nominal, real = agg(self.nominal), agg(self.real)
        tn, tr = agg(self.total_nominal), agg(self.total_real)
        part_st = np.maximum.reduceat(self.part_status, starts, axis=0) if len(starts) else \
            self.part_status[:0]
        tot_st = np.maximum.reduceat(self.total_status, starts) if len(starts) else \
            self.total_status[:0]
        keep = complete & ~np.isnan(tr)
        # consecutive complete years
        prev_ok = np.zeros(len(starts), dtype=bool)
        prev_ok[1:] = keep[1:] & keep[:-1]
        k_n = len(starts)
        pg = np.full(real.shape, np.nan)
        tg = np.full(k_n, np.nan)
        contrib = np.full(real.shape, np.nan)
        with np.errstate(divide="ignore", invalid="ignore"):
            for arr, out in ((real, pg), (tr[:, None], tg[:, None])):
                cur, before = arr[1:], arr[:-1]
                out[1:] = np.where((before > 0) & (cur >= 0), cur / before - 1.0, np.nan)
            if self.chain == "none":
                change = real[1:] - real[:-1]
            else:
                cum = np.concatenate([np.zeros((1, self.real.shape[1])), np.cumsum(
                    np.nan_to_num(self.changes, nan=0.0), axis=0)])
                # over rows t: sum of changes from t-m+1 to t, i.e. cum[t+1] - cum[t+1-m]
                rows = np.arange(len(self.periods))
                yoy = np.full(self.real.shape, np.nan)
                ok = rows >= m
                yoy[ok] = cum[rows[ok] + 1] - cum[rows[ok] + 1 - m]
                if stock:
                    per_year = yoy[last_rows]
                else:
                    per_year = np.add.reduceat(np.nan_to_num(yoy), starts, axis=0)
                    per_year[n < m] = np.nan
                change = per_year[1:]
            contrib[1:] = change / tr[:-1, None]
        for a in (pg, contrib):
            a[~prev_ok] = np.nan
        tg[~prev_ok] = np.nan
        sel = np.flatnonzero(keep)
        labels = np.array(self.year.labels(years), dtype=object)
        return _Basis(labels[sel], nominal[sel], real[sel], tn[sel], tr[sel], pg[sel], tg[sel],
                      contrib[sel], part_st[sel], tot_st[sel])

    def _basis(self, basis: str) -> _Basis:
        self._check_basis(basis)
        if basis == "period":
            return self._period_basis
        if basis == "yoy":
            return self._yoy_basis
        return self._annual_basis

    # -- frames ----------------------------------------------------------------------
    def contributions_frame(self, basis: Basis = "period") -> pd.DataFrame:
        """Contributions to the total's real growth in percentage points: one row per
        period (label), one column per part; each row adds up to :meth:`growth_frame`'s
        ``total``. First period(s) NaN."""
        b = self._basis(basis)
        return pd.DataFrame(100.0 * b.contributions, index=pd.Index(b.labels, name="period"),
                            columns=list(self.part_names))

    def growth_frame(self, basis: Basis = "period") -> pd.DataFrame:
        """Real growth in percent of every part and of the ``total``."""
        b = self._basis(basis)
        data = np.column_stack([b.part_growth, b.total_growth]) * 100.0
        return pd.DataFrame(data, index=pd.Index(b.labels, name="period"),
                            columns=[*self.part_names, TOTAL])

    def levels_frame(self) -> pd.DataFrame:
        """Real values of the parts, the total and the residual by period."""
        data = np.column_stack([self.real, self.total_real, self.residual])
        return pd.DataFrame(data, index=pd.Index(self.period_labels, name="period"),
                            columns=[*self.part_names, TOTAL, RESIDUAL])

    def table(self, basis: Basis = "period", *, status: bool = False) -> pd.DataFrame:
        """The board-pack table: EXACTLY ``period, component, nominal, real,
        real_growth_pct, contribution_pp`` (``status=True`` adds ``status``), one row per
        period and component, components in order: every part, ``total``, ``residual``.

        ``basis``: ``period`` (growth on the period before), ``yoy`` (on the same period a
        year earlier) or ``annual`` (annual sums, for stocks year-end values, of complete
        years). ``contribution_pp`` is empty for ``total`` and ``residual`` and where there
        is no earlier period; the residual's nominal is 0 (nominal parts always add up)."""
        b = self._basis(basis)
        n = len(self.part_names)
        k = n + 2
        b_n = len(b.labels)
        resid = (np.where(np.isnan(b.total_real), np.nan, 0.0) if self.chain == "none"
                 else b.total_real - b.real.sum(axis=1))
        nominal = np.column_stack([b.nominal, b.total_nominal,
                                   np.where(np.isnan(b.total_nominal), np.nan, 0.0)])
        real = np.column_stack([b.real, b.total_real, resid])
        growth = np.column_stack([b.part_growth, b.total_growth, np.full(b_n, np.nan)]) * 100.0
        contrib = np.column_stack([b.contributions, np.full((b_n, 2), np.nan)]) * 100.0
        comps = np.array([*self.part_names, TOTAL, RESIDUAL], dtype=object)
        data: dict[str, object] = {
            "period": pd.array(np.repeat(b.labels, k), dtype="str"),
            "component": pd.array(np.tile(comps, b_n), dtype="str"),
            "nominal": nominal.reshape(-1),
            "real": real.reshape(-1),
            "real_growth_pct": growth.reshape(-1),
            "contribution_pp": contrib.reshape(-1),
        }
        if status:
            st = np.column_stack([b.part_status, b.total_status, b.total_status])
            data["status"] = pd.array(_STATUS_ARR[st.reshape(-1).astype(np.intp)], dtype="str")
        return pd.DataFrame(data)


# --------------------------------------------------------------------------- building


def _check_request(parts: Sequence[Series], deflators: Sequence[Series],
                   pairs: Mapping[str, str], chain: str, kind: Kind | None,
                   to: Frequency | None) -> None:
    if chain not in CHAINS:
        raise fail(DF205, f"unknown way of putting the parts together: {chain!r}",
                   expected=" | ".join(CHAINS), found=repr(chain),
                   fix="Choose none (sum at base-period prices), fisher (chain-linked "
                   "period to period) or annual (annual overlap).")
    if not parts:
        raise fail(DF006, "no parts to total", expected="one or more money series",
                   found="none", fix="Give the money series that make up the total.")
    if not deflators:
        raise fail(DF006, "no deflator given", expected="a price index for each part",
                   found="none", fix="Give the price indexes the parts are deflated by.",
                   remedy="deflator_missing")
    names = [s.name for s in parts]
    seen: set[str] = set()
    dup = sorted({n for n in names if n in seen or seen.add(n)})  # type: ignore[func-returns-value]
    if dup:
        raise fail(DF005, "part names must be unique", expected="distinct series names",
                   found=f"repeated: {_fmt_names(dup)}",
                   fix="Rename the repeated series (e.g. add the source file).")
    clash = [n for n in names if n.strip().lower() in (TOTAL, RESIDUAL)]
    if clash:
        raise fail(DF206, f"a part is called {clash[0]!r}, like a line of the total",
                   expected="part names other than 'total' and 'residual'",
                   found=_fmt_names(clash), series=clash[0],
                   fix="Rename the series so the table's total and residual lines stay "
                   "distinct.")
    defl_names = {d.name for d in deflators}
    problems: list[Problem] = []
    for s_name, d_name in pairs.items():
        if s_name not in names:
            problems.append(fail(DF202, f"a pair names the series {s_name!r}, which is not "
                                 "among the parts", expected=f"one of {_fmt_names(names)}",
                                 found=repr(s_name), series=s_name,
                                 fix="Pair only series that are parts of the total (check "
                                 "the spelling).").problems[0])
        if d_name not in defl_names:
            problems.append(fail(DF202, f"a pair names the deflator {d_name!r}, which is not "
                                 "given", expected=f"one of {_fmt_names(sorted(defl_names))}",
                                 found=repr(d_name), series=s_name, column=d_name,
                                 fix="Pair each part with one of the price indexes given "
                                 "(check the spelling), or give that index.").problems[0])
    unpaired = [n for n in names if n not in pairs]
    if unpaired:
        problems.append(fail(DF201, f"{len(unpaired)} part(s) have no deflator paired with "
                             "them", expected="one deflator for every part",
                             found=f"no pair for {_fmt_names(unpaired)}", series=unpaired[0],
                             fix="Pair every part with the price index it is deflated by."
                             ).problems[0])
    if problems:
        raise RealbasisError(problems)
    kinds = {kind or s.kind for s in parts}
    if "index" in kinds:
        idx = next(s.name for s in parts if (kind or s.kind) == "index")
        raise fail(DF003, f"{idx!r} is a price index, not a money amount",
                   expected="flow or stock series", found="kind 'index'", series=idx,
                   fix="Total money series and use indexes as deflators, or say the "
                   "series is a flow or a stock.", remedy="series_kind")
    if len(kinds) > 1:
        by = ", ".join(f"{s.name!r} ({kind or s.kind})" for s in parts[:6])
        raise fail(DF204, "the parts mix flows and stocks", expected="parts of one kind",
                   found=by, fix="Total flows with flows and stocks with stocks, or say "
                   "which kind every part is.", remedy="series_kind")
    units = {s.unit.strip() for s in parts if s.unit and s.unit.strip()}
    if len(units) > 1:
        by = ", ".join(f"{s.name!r} ({s.unit or 'no unit'})" for s in parts[:6])
        raise fail(DF203, "the parts are in different units", expected="one unit for "
                   "every part", found=by, fix="Convert the parts to one unit (and one "
                   "scale, e.g. thousands) before totalling them.")
    freqs = {s.frequency for s in parts}
    if to is None and len(freqs) > 1:
        raise fail(DF002, "the parts have different frequencies",
                   expected="one frequency, or a common frequency for the results",
                   found=", ".join(sorted(f.describe() for f in freqs)),
                   fix="Say which frequency the results should have.",
                   remedy="result_frequency")


def _year_frequency(out: Frequency, fy: int | None) -> Frequency:
    if out.periods_per_year == 1:
        return out
    if out.is_fiscal:
        return Frequency("FY", out.fy_start)
    if fy is not None and fy != 1:
        cand = Frequency("FY", fy)
        if relation(out, cand) == "coarser":
            return cand
    return ANNUAL


def _chained_status(rank: np.ndarray, b0: int, b1: int, lo_of: np.ndarray) -> np.ndarray:
    """Worst rank over every period a chained level rests on: the stretch between the
    period (from ``lo_of[t]``, which reaches back to the prices used) and the base."""
    t_n = len(rank)
    out = np.zeros(t_n, dtype=np.int8)
    if not t_n:
        return out
    lo_b = int(lo_of[b0])
    fwd = np.maximum.accumulate(rank[lo_b:])  # max(rank[lo_b..h]) at h - lo_b
    after = np.arange(t_n) >= b0
    h = np.maximum(np.arange(t_n), b1)
    out[after] = fwd[h[after] - lo_b]
    bwd = np.maximum.accumulate(rank[: b1 + 1][::-1])[::-1]  # max(rank[l..b1]) at l
    out[~after] = bwd[lo_of[~after]]
    return out.astype(np.int8)


def _chain_note(chain: str, span: Span, single: bool, year: Frequency, n: int) -> list[str]:
    if chain == "none":
        return [
            f"Total: the sum of the {n} parts' real values, each in constant {span.label} "
            "dollars (at the prices of the base period), so the parts add up to the total "
            "exactly and the residual is 0.",
            "Contributions (percentage points): each part's real change divided by the "
            "total of the period before, i.e. its share of the total times its own growth; "
            "they add up exactly to the total's real growth.",
        ]
    ref = (f"chained total(t) = nominal total({span.label}) x Q(t) / Q({span.label})"
           if single else
           f"the chained total is scaled so that its average over {span.label} equals the "
           f"average of the nominal total over {span.label} (the reference-year "
           "convention of national accounts), i.e. total(t) = mean nominal total over the "
           "base x Q(t) / mean Q over the base")
    if chain == "fisher":
        lines = [
            f"Total: chain-linked period to period with the Fisher volume index Q of the "
            f"parts (each part's price is its deflator as used), in chained {span.label} "
            f"dollars: {ref}.",
            "Contributions (percentage points): the national accounts' additive "
            "decomposition of the Fisher index (the BEA contributions formula; Reinsdorf, "
            "Diewert and Ehemann 2002), C_i = (p_i,t-1 + p_i,t / P_F) x (x_i,t - x_i,t-1) / "
            "sum_j (p_j,t-1 + p_j,t / P_F) x_j,t-1 with P_F the Fisher price index of the "
            "period; they add up exactly to the total's real growth.",
        ]
    else:
        lines = [
            f"Total: annually chain-linked with the annual-overlap method (IMF Quarterly "
            f"National Accounts Manual 2017, ch. 8) over {year.describe()}: the periods of "
            "each year are valued at the average prices of the year before (the first "
            "year at its own) and linked at that year's annual average, in chained "
            f"{span.label} dollars: {ref}.",
            "Contributions (percentage points): within a year each part's real change at "
            "the previous year's average prices; across a year boundary the change is split "
            "at the previous year's annual average (before it at the prices that year was "
            "valued at, after it at the new ones), so they add up exactly to the total's "
            "real growth.",
        ]
    lines.append("Residual = chained total - sum of the parts' real values. The parts are "
                 f"in constant {span.label} dollars (prices of the base period) while the "
                 "chained total revalues them at changing prices, so the parts no longer add "
                 "up; the residual shows the difference and is never hidden (IMF Quarterly "
                 "National Accounts Manual 2017, ch. 8; national accounts practice for "
                 "chained-dollar tables). It is small near the base period and grows as "
                 "relative prices move away from it.")
    return lines


def total_of_parts(
    parts: Sequence[Series], deflators: Sequence[Series], pairs: Mapping[str, str],
    base: str | Span | pd.Period, *, chain: Chain = "none", to: Frequency | None = None,
    kind: Kind | None = None, fy_start: int | None = None, interpolate: bool = False,
) -> TotalResult:
    """The total of ``parts``, each deflated by its own deflator, with its residual and
    the contributions of every part to the total's real growth.

    ``pairs`` maps each part's name to the name of its deflator (one of ``deflators``);
    every part needs one. ``chain``: ``none`` (sum at base-period prices), ``fisher``
    (chain-linked Fisher, period to period) or ``annual`` (annual overlap). ``base``,
    ``to``, ``kind``, ``fy_start`` and ``interpolate`` are those of
    :func:`pipeline.deflate.deflate`, which deflates every part. The total covers the
    periods every part covers (a warning says when that cuts some off)."""
    pairs = dict(pairs)
    _check_request(parts, deflators, pairs, chain, kind, to)
    by_name = {d.name: d for d in deflators}
    groups: dict[str, list[Series]] = {}
    for s in parts:
        groups.setdefault(pairs[s.name], []).append(s)
    results: list[DeflationResult] = []
    problems: list[Problem] = []
    for d_name, members in groups.items():
        try:
            results.append(deflate(members, [by_name[d_name]], base, to=to,
                                   interpolate=interpolate, kind=kind, fy_start=fy_start))
        except RealbasisError as err:
            problems.extend(err.problems)
    if problems:
        raise RealbasisError(problems)
    return _assemble(parts, pairs, results, chain, fy_start)


def _assemble(parts: Sequence[Series], pairs: Mapping[str, str],
              results: list[DeflationResult], chain: str, fy_start: int | None) -> TotalResult:
    out = results[0].frequency
    span = results[0].base
    periods = results[0].periods
    for r in results[1:]:
        if not r.periods.equals(periods):
            periods = periods.union(r.periods)
    names = [s.name for s in parts]
    n, t_n = len(names), len(periods)
    nominal = np.full((t_n, n), np.nan)
    real = np.full((t_n, n), np.nan)
    price = np.full((t_n, n), np.nan)
    status = np.zeros((t_n, n), dtype=np.int8)
    method: list[str] = []
    warnings: list[Problem] = []
    used: list[Series] = []
    for r in results:
        rows = (np.arange(t_n) if r.periods.equals(periods)
                else periods.get_indexer(r.periods))
        cols = [names.index(s) for s in r.series_names]
        nominal[np.ix_(rows, cols)] = r.nominal
        real[np.ix_(rows, cols)] = r.real[0]
        price[np.ix_(rows, cols)] = r.index_used[0]
        status[np.ix_(rows, cols)] = r.status[0]
        for line in r.method_note():
            if line not in method:
                method.append(line)
        warnings.extend(r.warnings)
        used.extend(r.deflators_used)
    present = ~np.isnan(nominal) & ~np.isnan(real)
    full = present.all(axis=1)
    if not full.any():
        raise fail(DF207, "the parts have no period in common",
                   expected="periods where every part has a value",
                   found="; ".join(f"{nm}: {_span_of(out, periods, present[:, j])}"
                                   for j, nm in enumerate(names[:6])),
                   fix="Total parts that cover the same periods.")
    first, last = np.flatnonzero(full)[[0, -1]]
    any_rows = np.flatnonzero(present.any(axis=1))  # periods no part has are left out quietly
    if any_rows[0] < first or any_rows[-1] > last:
        short = [nm for j, nm in enumerate(names)
                 if not (present[any_rows[0]:first, j].all()
                         and present[last + 1:any_rows[-1] + 1, j].all())]
        warnings.append(warn(DF211, f"the total covers {out.label(periods[first])} to "
                             f"{out.label(periods[last])}, the periods every part covers",
                             expected="parts covering the same periods",
                             found=f"shorter: {_fmt_names(short) or 'some parts'}",
                             fix="Periods where a part has no value are left out of the "
                             "total; supply the missing values to show them."))
    sl = slice(first, last + 1)
    periods, nominal, real, price, status, present = (periods[sl], nominal[sl], real[sl],
                                                      price[sl], status[sl], present[sl])
    gaps = ~present.all(axis=1)
    if chain != "none" and gaps.any():
        rows = np.flatnonzero(gaps)
        who = [names[j] for j in np.flatnonzero(~present[rows].all(axis=0))]
        raise fail(DF208, f"the chained total cannot bridge {len(rows)} period(s) where a "
                   "part has no value", expected="a value for every part in every period",
                   found=f"{_fmt_names([out.label(periods[i]) for i in rows])} missing in "
                   f"{_fmt_names(who)}", period=out.label(periods[rows[0]]), series=who[0],
                   fix="Supply the missing values, or total at base-period prices (which "
                   "leaves those periods empty).")
    year = _year_frequency(out, fy_start if fy_start is not None else (
        out.fy_start if out.is_fiscal else None))
    total_nominal = np.where(gaps, np.nan, np.nansum(nominal, axis=1))
    rank_t = np.where(gaps, 0, status.max(axis=1)).astype(np.int8) if n else \
        np.zeros(len(periods), np.int8)
    single = span.is_single
    if chain == "none":
        summed = additive_total(real)
        total_real = np.where(gaps, np.nan, summed.level)
        changes = summed.changes
        total_status = rank_t
    else:
        bpos = _base_rows(span, out, periods)
        p = price / 100.0
        starts, _, _ = year_groups(periods, year)
        core = fisher_chain(p, real) if chain == "fisher" else annual_overlap_chain(
            p, real, starts)
        bad = np.flatnonzero(~(np.isfinite(core.level) & (core.level > 0)))
        if bad.size:
            raise fail(DF209, "the chained total is undefined: the parts' values at "
                       "either period's prices do not stay positive",
                       expected="positive sums of the parts in every period",
                       found=f"first in {out.label(periods[bad[0]])}",
                       period=out.label(periods[bad[0]]),
                       fix="Chain-linking needs totals that stay positive; total parts that "
                       "can be zero or negative (net amounts) at base-period prices instead.")
        scale = float(np.mean(total_nominal[bpos]) / np.mean(core.level[bpos]))
        scaled = core.scaled(scale)
        total_real, changes = scaled.level, scaled.changes
        if chain == "annual":
            year_of = np.repeat(np.arange(len(starts)), np.diff(np.append(starts,
                                                                          len(periods))))
            lo_of = starts[np.maximum(year_of - 1, 0)]
            lo_of = np.minimum(lo_of, np.arange(len(periods)))
        else:
            lo_of = np.arange(len(periods))
        total_status = _chained_status(rank_t, int(bpos[0]), int(bpos[-1]), lo_of)
        if chain == "annual" and len(starts):
            n0 = (starts[1] if len(starts) > 1 else len(periods))
            ppy = out.periods_per_year // year.periods_per_year
            if n0 < ppy:
                first_year = year.label(periods[0].asfreq(year.pandas_freq, how="end"))
                warnings.append(warn(DF212, f"the first year ({first_year}) has {n0} of its "
                                     f"{ppy} periods", expected="complete years",
                                     found=f"{n0} period(s)", period=out.label(periods[0]),
                                     fix="Its average prices are taken over the periods "
                                     "present; start the parts at the beginning of a year "
                                     "for the standard annual overlap."))
    pairs_words = "; ".join(f"{nm!r} by {pairs[nm]!r}" for nm in names[:12])
    more = f" and {n - 12} more" if n > 12 else ""
    method = [f"Total of {n} parts, each deflated by its own deflator: {pairs_words}{more}.",
              *_merge_deflator_lines(method), *_chain_note(chain, span, single, year, n)]
    if out.periods_per_year > 1:
        method.append(
            f"Year-on-year and annual contributions ({year.describe()}; annual = sums of "
            "complete years, for stocks year-end values) "
            + ("use the same share-weighted formula on those spans."
               if chain == "none" else
               "add up the period contributions in chained dollars over the span and "
               "divide by the total at its start, so they too add up exactly."))
    unit = next((s.unit for s in parts if s.unit), None)
    kinds = {r.kinds[0] for r in results if r.kinds}
    return TotalResult(
        chain=chain,  # type: ignore[arg-type]
        base=span, frequency=out, year=year, periods=periods, part_names=tuple(names),
        deflator_names=tuple(pairs[nm] for nm in names), kind=next(iter(kinds), "flow"),
        unit=unit, nominal=nominal, real=real, price=price, part_status=status,
        total_nominal=total_nominal, total_real=total_real, total_status=total_status,
        changes=changes, method=tuple(method), warnings=tuple(_dedupe(warnings)),
        deflators_used=tuple(used),
    )


_DEFLATOR_LINE = re.compile(r"^Deflator '(.*?)' (\(.*)$", re.S)


def _merge_deflator_lines(lines: list[str]) -> list[str]:
    """One line per way of deflating ("Deflators 'a', 'b' and 3 more (monthly) used as
    is; ...") instead of one per deflator."""
    out: list[str] = []
    groups: dict[str, list[str]] = {}
    for line in lines:
        m = _DEFLATOR_LINE.match(line)
        if not m:
            out.append(line)
            continue
        if m.group(2) not in groups:
            out.append(m.group(2))  # placeholder, replaced below
        groups.setdefault(m.group(2), []).append(m.group(1))
    return [(f"Deflator{'s' if len(groups[x]) > 1 else ''} "
             f"{_fmt_names(groups[x], 8)} {x}") if x in groups else x for x in out]


def _dedupe(problems: list[Problem]) -> list[Problem]:
    seen: set[Problem] = set()
    out = []
    for p in problems:
        if p not in seen:
            seen.add(p)
            out.append(p)
    return out


def _span_of(freq: Frequency, periods: pd.PeriodIndex, mask: np.ndarray) -> str:
    rows = np.flatnonzero(mask)
    if not rows.size:
        return "no values"
    return f"{freq.label(periods[rows[0]])} to {freq.label(periods[rows[-1]])}"


def _base_rows(span: Span, out: Frequency, periods: pd.PeriodIndex) -> np.ndarray:
    try:
        bper = span.periods_in(out)
    except RealbasisError:
        raise fail(DF210, f"the base {span.label} is not made of whole result periods "
                   f"({out.describe()}), so it cannot reference a chained total",
                   expected=f"a base of whole {out.describe()} periods",
                   found=span.describe(), period=span.label,
                   fix="Choose a base made of whole result periods, or show the results "
                   "at the base's frequency.", remedy="base_period") from None
    pos = periods.get_indexer(bper.asfreq(periods.freqstr, how="end")
                              if bper.freqstr != periods.freqstr else bper)
    if (pos < 0).any():
        raise fail(DF210, f"the base {span.label} lies outside the periods every part "
                   "covers, so it cannot reference a chained total",
                   expected=f"a base between {out.label(periods[0])} and "
                   f"{out.label(periods[-1])}", found=span.describe(), period=span.label,
                   fix="Choose a base period the parts all cover.", remedy="base_period")
    return pos
