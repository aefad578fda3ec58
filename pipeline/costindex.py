"""An organisation's own cost index, blended from component price indexes and weights.

Three ways to blend (ILO/IMF Consumer Price Index Manual 2004, ch. 9-10 and 15; IMF
Quarterly National Accounts Manual 2017, ch. 8 on annual chain-linking):

``fixed``
    One set of weights for the whole span (a fixed basket, Laspeyres/Young type):
    ``I(t) = sum_k w_k X_k(t) / X_k(r)`` with ``r`` the price-reference period.
``annual-chain``
    Weights updated each year and chain-linked (Laspeyres-type annual chain): within year
    ``y`` the index moves as ``sum_k w_{y,k} X_k(t) / X_k(r_y)`` and is linked to the
    previous year's level at ``r_y``: the last period of year ``y-1`` (``link="period"``,
    one-period overlap) or the average of year ``y-1`` (``link="annual"``, annual overlap).
``tornqvist``
    Chained Törnqvist: each period-to-period link is
    ``exp(sum_k 0.5 (s_k(t-1) + s_k(t)) ln(X_k(t) / X_k(t-1)))`` with ``s(t)`` the shares
    of the year ``t`` falls in, so adjacent periods' shares are averaged (at a change of
    year the two years' weights are averaged).

Weights are given per year (calendar or fiscal, the weights table's period frequency) as
shares or as spending amounts; each year's row is normalised to shares. Weights for year
``y`` are read as the spending shares at the prices of the link period (price-update
older spending first if you need to). The result reports the gap between the
fixed-weight and each chained version in percentage points a year: the difference of
their average annual growth rates over the span, and year by year.

Every value carries the worst status of the component values it rests on: a preliminary
component month makes the blended month preliminary.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
import pandas as pd

from . import growth
from .errors import Problem, fail, register, warn
from .model import STATUS_RANK, STATUSES, Frequency, Series
from .periods import frequency_of_period

Method = Literal["fixed", "annual-chain", "tornqvist"]
METHODS: tuple[Method, ...] = ("fixed", "annual-chain", "tornqvist")
METHOD_NAMES: Mapping[str, str] = {
    "fixed": "fixed weights",
    "annual-chain": "annual chain (weights updated each year)",
    "tornqvist": "chained Törnqvist",
}
WeightsAs = Literal["auto", "shares", "amounts"]
Link = Literal["period", "annual"]

WS101 = register("WS101", "weights do not cover the components")
WS102 = register("WS102", "negative or invalid weight")
WS103 = register("WS103", "year without weights")
WS104 = register("WS104", "shares do not add up to 1 or 100")
WS105 = register("WS105", "component indexes cannot be blended")
WS106 = register("WS106", "unknown blending method or option")
WS107 = register("WS107", "component periods trimmed to the common span")
WS108 = register("WS108", "weights read as spending amounts")


# ---------------------------------------------------------------------------------------
# Weights


@dataclass(frozen=True)
class CostWeights:
    """Weights per year as shares (rows sum to 1).

    ``shares``: DataFrame indexed by a PeriodIndex of years (annual or fiscal-year
    frequency), one column per component. ``given_as``: how the input was read.
    """

    shares: pd.DataFrame
    given_as: Literal["shares", "amounts"]
    year_frequency: Frequency
    warnings: tuple[Problem, ...] = ()

    def labels(self) -> list[str]:
        return self.year_frequency.labels(self.shares.index)  # type: ignore[arg-type]


def weights_from_long(frame: pd.DataFrame, *, year: str = "year", component: str = "component",
                      weight: str = "weight", fy_start: int | None = None,
                      weights_as: WeightsAs = "auto", source: str | None = None) -> CostWeights:
    """Read a long weights table ``year, component, weight`` (year labels such as 2024 or
    FY2025, read by :mod:`pipeline.labels`)."""
    from .labels import parse_label_column

    missing = [c for c in (year, component, weight) if c not in frame.columns]
    if missing:
        raise fail(WS101, f"weights table lacks column(s) {', '.join(missing)}",
                   expected=f"columns {year}, {component}, {weight}",
                   found=", ".join(map(str, frame.columns)),
                   fix="Name the columns year, component and weight.", file=source)
    col = parse_label_column([str(v) for v in frame[year]], fy_start, file=source, column=year,
                             rows=list(range(2, len(frame) + 2)))
    if col.bad:
        row, text = col.bad[0]
        raise fail(WS103, "weights year label not understood", expected="a year such as 2024 or FY2025",
                   found=repr(text), fix="Write the year the weights apply to.", file=source,
                   row=row + 2, column=year)
    if col.frequency.code not in ("A", "FY"):
        raise fail(WS103, "weights must be given per year",
                   expected="year labels such as 2024 or FY2025",
                   found=f"{col.frequency.describe()} labels", fix="Give one set of weights per year.",
                   file=source, column=year)
    values = pd.to_numeric(frame[weight], errors="coerce")
    bad = values.isna() & frame[weight].notna()
    if bad.any():
        pos = int(np.flatnonzero(bad.to_numpy())[0])
        raise fail(WS102, "weight is not a number", expected="a number >= 0",
                   found=repr(frame[weight].iloc[pos]), fix="Correct the weight.", file=source,
                   row=pos + 2, column=weight)
    tidy = pd.DataFrame({"year": col.index, "component": frame[component].astype(str).to_numpy(),
                         "weight": values.to_numpy()})
    dup = tidy.duplicated(["year", "component"])
    if dup.any():
        pos = int(np.flatnonzero(dup.to_numpy())[0])
        raise fail(WS101, "a component has two weights for one year",
                   expected="one row per year and component", found=f"{tidy.iloc[pos, 1]!r}",
                   fix="Delete or combine the duplicate row.", file=source, row=pos + 2,
                   column=component)
    wide = tidy.pivot(index="year", columns="component", values="weight")
    wide.columns = [str(c) for c in wide.columns]
    return make_weights(wide, weights_as=weights_as, source=source)


def weights_from_series(series: Sequence[Series], *, weights_as: WeightsAs = "auto",
                        source: str | None = None) -> CostWeights:
    """Weights from annual (or fiscal-year) series, one per component, e.g. a wide file
    ``period, Goods purchased, Wages, ...`` read by the intake."""
    if not series:
        raise fail(WS101, "no weights given", expected="one weight series per component",
                   found="none", fix="Add the weights file.", file=source)
    freqs = {s.frequency for s in series}
    if len(freqs) != 1 or next(iter(freqs)).code not in ("A", "FY"):
        raise fail(WS103, "weights must be given per year",
                   expected="annual or fiscal-year weights",
                   found=", ".join(sorted(f.describe() for f in freqs)),
                   fix="Give one set of weights per (fiscal) year.", file=source)
    wide = pd.concat({s.name: s.values for s in series}, axis=1)
    return make_weights(wide, weights_as=weights_as, source=source)


TEXT_NAME = "weights (typed text)"
"""Name the intake gives typed weights internally; problems never show it (they say
``line N``)."""


def _as_line(p: Problem, lines: Mapping[tuple[str, str], int] | None = None) -> Problem:
    """``p`` located by line of typed text instead of by file and row."""
    import dataclasses

    from .errors import Location

    w = p.where
    line = w.row
    if line is None and lines and w.period:
        line = lines.get((w.period, w.column or "")) or lines.get((w.period, ""))
    where = Location(column=w.column, series=w.series, period=w.period, line=line)
    return dataclasses.replace(p, where=where)


def _line_map(data: bytes, fy_start: int | None, settings: object) -> dict[tuple[str, str], int]:
    """(year label, component or '') -> line of the typed weights table, for problems the
    weights checks locate by year and component."""
    from .errors import RealbasisError
    from .ingest import read_table
    from .labels import parse_label

    try:
        table = read_table(data, filename=TEXT_NAME, settings=settings)  # type: ignore[arg-type]
    except RealbasisError:
        return {}
    out: dict[tuple[str, str], int] = {}
    cells = table.cells
    for i, line in enumerate(table.rows):
        row = [str(v) for v in cells.iloc[i].tolist()]
        label = None
        for text in row:
            try:
                period, freq = parse_label(text.strip(), fy_start)
            except RealbasisError:
                continue
            if freq.code in ("A", "FY"):
                label = freq.label(period)
                break
        if label is None:
            continue
        out.setdefault((label, ""), int(line))
        for text in row:  # long rows: year, component, weight
            out.setdefault((label, text.strip()), int(line))
    return out


def weights_from_text(text: str, *, components: Sequence[str] | None = None,
                      fy_start: int | None = None, weights_as: WeightsAs = "auto",
                      settings: object = None) -> CostWeights:
    """Weights typed or pasted as text: a small table of one row per year (``period,
    Goods purchased, Wages, ...``, comma, semicolon or tab separated), read by the
    intake like a file. Every problem is located by **line of the text** (``line 2``,
    the header being line 1) and column, never by a file name. ``components`` names the
    columns that are weights (read as amounts or shares, never as indexes)."""
    from .errors import RealbasisError
    from .ingest import read_file

    if not (text or "").strip():
        raise fail(WS101, "no weights given",
                   expected="a table: a year column, then one column per component",
                   found="(empty)", fix="Type or paste the weights, one line per year.")
    data = text.encode("utf-8")
    kinds = {c: "flow" for c in components or ()}
    lines: dict[tuple[str, str], int] | None = None
    try:
        intake = read_file(data, filename=TEXT_NAME, fy_start=fy_start,
                           kinds=kinds or None, settings=settings)  # type: ignore[arg-type]
        intake.raise_for_errors()
        money = [s for s in intake.series if s.kind != "index" or s.name in kinds]
        weights = weights_from_series(money or list(intake.series), weights_as=weights_as)
    except RealbasisError as err:
        if any(p.where.row is None and p.where.period for p in err.problems):
            lines = _line_map(data, fy_start, settings)
        raise RealbasisError([_as_line(p, lines) for p in err.problems]) from None
    import dataclasses

    return dataclasses.replace(weights, warnings=tuple(
        _as_line(p) for p in (*intake.warnings, *weights.warnings)))


def make_weights(wide: pd.DataFrame, *, weights_as: WeightsAs = "auto",
                 source: str | None = None) -> CostWeights:
    """Validate and normalise a wide weights table (year periods x components)."""
    if weights_as not in ("auto", "shares", "amounts"):
        raise fail(WS106, f"unknown weights kind {weights_as!r}", expected="auto, shares or amounts",
                   found=str(weights_as), fix="Say whether the weights are shares or amounts.")
    if not isinstance(wide.index, pd.PeriodIndex) or len(wide) == 0:
        raise fail(WS103, "weights need year periods", expected="rows per year",
                   found=type(wide.index).__name__, fix="Index the weights by year.", file=source)
    wide = wide.sort_index().astype(float)
    freq = frequency_of_period(wide.index[0])
    if freq.code not in ("A", "FY"):
        raise fail(WS103, "weights must be given per year", expected="annual or fiscal years",
                   found=freq.describe(), fix="Give one set of weights per year.", file=source)
    labels = freq.labels(wide.index)  # type: ignore[arg-type]
    arr = wide.to_numpy()
    neg = np.argwhere(arr < 0)
    if len(neg):
        r, c = neg[0]
        raise fail(WS102, "negative weight", expected="weights >= 0",
                   found=f"{arr[r, c]:g} for {wide.columns[c]!r} in {labels[r]}",
                   fix="Weights are spending shares or amounts and cannot be negative.",
                   file=source, period=labels[r], column=str(wide.columns[c]))
    holes = np.argwhere(np.isnan(arr))
    if len(holes):
        r, c = holes[0]
        raise fail(WS101, "weights do not cover every component in every year",
                   expected="a weight (0 allowed) for each component in each year",
                   found=f"no weight for {wide.columns[c]!r} in {labels[r]}",
                   fix="Add the missing weight, or 0 if there was no such spending.",
                   file=source, period=labels[r], column=str(wide.columns[c]))
    totals = arr.sum(axis=1)
    if (totals <= 0).any():
        r = int(np.flatnonzero(totals <= 0)[0])
        raise fail(WS102, "weights of a year add up to zero", expected="a positive total",
                   found=f"total 0 in {labels[r]}", fix="Give the year's spending.",
                   file=source, period=labels[r])
    looks_shares = bool(np.all(np.isclose(totals, 1.0, atol=5e-3)
                               | np.isclose(totals, 100.0, atol=0.5)))
    warnings: list[Problem] = []
    if weights_as == "shares" and not looks_shares:
        r = int(np.flatnonzero(~(np.isclose(totals, 1.0, atol=5e-3)
                                 | np.isclose(totals, 100.0, atol=0.5)))[0])
        raise fail(WS104, "shares do not add up to 1 (or 100)",
                   expected="each year's shares summing to 1 or 100",
                   found=f"{totals[r]:g} in {labels[r]}",
                   fix="Correct the shares, or give the weights as spending amounts.",
                   file=source, period=labels[r])
    given_as: Literal["shares", "amounts"] = (
        "shares" if weights_as == "shares" or (weights_as == "auto" and looks_shares)
        else "amounts")
    if weights_as == "auto" and given_as == "amounts":
        warnings.append(warn(WS108, "weights do not add up to 1 or 100; read as spending "
                             "amounts and turned into shares per year",
                             found=f"totals {', '.join(f'{t:g}' for t in totals[:3])}",
                             fix="Say whether the weights are amounts or shares to be explicit.",
                             remedy="weights_as",
                             file=source))
    shares = pd.DataFrame(arr / totals[:, None], index=wide.index, columns=wide.columns)
    return CostWeights(shares, given_as, freq, tuple(warnings))


# ---------------------------------------------------------------------------------------
# Blending


@dataclass(frozen=True)
class CostIndex:
    """An own cost index in up to three versions (``values`` columns = methods).

    Values are scaled so the reference = 100: the first period (``link="period"``) or
    the average of the first year (``link="annual"``). ``status``: worst component
    status per period. ``gap_pp``: average annual growth of the fixed-weight version
    minus that of each chained version, in percentage points a year.
    """

    name: str
    values: pd.DataFrame
    frequency: Frequency
    weights: CostWeights
    fixed_year: pd.Period
    link: Link
    reference: str
    status: pd.Series
    components: tuple[str, ...]
    gap_pp: Mapping[str, float]
    warnings: tuple[Problem, ...] = ()

    @property
    def methods(self) -> tuple[str, ...]:
        return tuple(self.values.columns)

    def labels(self) -> list[str]:
        return self.frequency.labels(self.values.index)  # type: ignore[arg-type]

    def table(self) -> pd.DataFrame:
        """``period, <method>..., status``."""
        out = pd.DataFrame({"period": self.labels()})
        for m in self.methods:
            out[m] = self.values[m].to_numpy()
        out["status"] = self.status.to_numpy()
        return out

    def gap_table(self) -> pd.DataFrame:
        """Per year: annual-average growth of each version (percent) and the gap of the
        fixed-weight version over each chained one (percentage points). Only complete
        years are compared."""
        ppy = self.frequency.periods_per_year
        years = self.values.index.asfreq(self.weights.year_frequency.pandas_freq)
        grouped = self.values.groupby(years)
        means = grouped.mean()[grouped.size() == ppy]
        growth = means.pct_change() * 100
        consecutive = np.diff(means.index.year, prepend=-10) == 1
        growth = growth[consecutive]
        out = pd.DataFrame({"year": self.weights.year_frequency.labels(growth.index)})  # type: ignore[arg-type]
        for m in self.methods:
            out[f"growth_{m}_pct"] = growth[m].to_numpy()
        for m in self.methods:
            if m != "fixed" and "fixed" in self.methods:
                out[f"gap_vs_{m}_pp"] = (growth["fixed"] - growth[m]).to_numpy()
        return out

    def series(self, method: str | None = None, name: str | None = None) -> Series:
        m = method or self.methods[-1]
        if m not in self.methods:
            raise fail(WS106, f"method {m!r} was not computed", expected=", ".join(self.methods),
                       found=m, fix="Compute that method first.")
        return Series(name or f"{self.name} ({METHOD_NAMES[m]})", self.values[m].copy(),
                      self.frequency, kind="index", unit=f"index {self.reference}=100",
                      status=self.status.copy(), reference=self.reference,
                      notes=self.method_note())

    def recipe(self) -> dict[str, object]:
        """A JSON-safe description (for ``Workspace.own_indexes``); rebuild the index with
        :func:`blend_recipe` and the same component indexes."""
        yf = self.weights.year_frequency
        return {
            "kind": "cost-index",
            "name": self.name,
            "components": list(self.components),
            "methods": list(self.methods),
            "link": self.link,
            "fixed_year": yf.label(self.fixed_year),
            "year_frequency": {"code": yf.code, "fy_start": yf.fy_start},
            "weights_given_as": self.weights.given_as,
            "weights": {lab: {c: float(v) for c, v in row.items()}
                        for lab, (_, row) in zip(self.weights.labels(),
                                                 self.weights.shares.iterrows(), strict=True)},
        }

    def method_note(self) -> tuple[str, ...]:
        w = self.weights
        years = w.labels()
        notes = [
            f"{self.name}: {len(self.components)} component indexes "
            f"({', '.join(self.components)}) blended with spending weights "
            f"given as {w.given_as} for {years[0]}" + (f" to {years[-1]}" if len(years) > 1 else "")
            + ".",
            f"Reference: {self.reference} = 100.",
        ]
        if "fixed" in self.methods:
            notes.append(f"Fixed weights: the {w.year_frequency.label(self.fixed_year)} "
                         "weights for every period (a fixed basket).")
        if "annual-chain" in self.methods:
            how = ("the last period of the previous year" if self.link == "period"
                   else "the average of the previous year (annual overlap)")
            notes.append("Annual chain: each year's weights, linked at " + how + ".")
        if "tornqvist" in self.methods:
            notes.append("Chained Törnqvist: period-to-period links weighted by the average "
                         "shares of the two adjacent periods.")
        for m, g in self.gap_pp.items():
            notes.append(f"Fixed weights minus {METHOD_NAMES[m]}: {g:+.2f} percentage points "
                         "a year on average.")
        return tuple(notes)


def _components_frame(components: Sequence[Series]) -> tuple[pd.DataFrame, pd.DataFrame,
                                                              Frequency, list[Problem]]:
    if not components:
        raise fail(WS105, "no component indexes given", expected="at least one index",
                   found="none", fix="Add the component indexes.")
    freqs = {c.frequency for c in components}
    if len(freqs) != 1:
        raise fail(WS105, "component indexes have different frequencies",
                   expected="all monthly, all quarterly or all annual",
                   found="; ".join(f"{c.name}: {c.frequency.describe()}" for c in components),
                   fix="Convert the components to one frequency first.")
    names = [c.name for c in components]
    if len(set(names)) != len(names):
        raise fail(WS105, "two components share a name", expected="distinct names",
                   found=", ".join(names), fix="Rename one of the components.")
    freq = next(iter(freqs))
    wide = pd.concat({c.name: c.values.astype(float) for c in components}, axis=1).sort_index()
    ranks = pd.concat({c.name: c.status_or_final().map(STATUS_RANK) for c in components},
                      axis=1).reindex(wide.index)
    warnings: list[Problem] = []
    complete = wide.notna().all(axis=1).to_numpy()
    if not complete.any():
        raise fail(WS105, "the component indexes share no period",
                   expected="overlapping periods", found="no common period",
                   fix="Check the components' periods.")
    first, last = np.flatnonzero(complete)[[0, -1]]
    inner = complete[first:last + 1]
    if not inner.all():
        k = int(first + np.flatnonzero(~inner)[0])
        gap = wide.iloc[k]
        raise fail(WS105, "a component index has a gap", expected="no missing values",
                   found=f"{', '.join(gap.index[gap.isna()])} missing in "
                   f"{freq.label(wide.index[k])}", fix="Fill the gap or shorten the span.",
                   period=freq.label(wide.index[k]))
    if first > 0 or last < len(wide) - 1:
        warnings.append(warn(
            WS107, "components cover different spans; only the common span is blended",
            found=f"{freq.label(wide.index[first])} to {freq.label(wide.index[last])}",
            fix="Extend the shorter components to use the whole span."))
    wide = wide.iloc[first:last + 1]
    bad = wide.to_numpy() <= 0
    if bad.any():
        r, c = np.argwhere(bad)[0]
        raise fail(WS105, "component index values must be positive", expected="values > 0",
                   found=f"{wide.iat[r, c]:g}", fix="Correct the index value.",
                   series=str(wide.columns[c]), period=freq.label(wide.index[r]))
    return wide, ranks.iloc[first:last + 1].fillna(0), freq, warnings


def blend(
    components: Sequence[Series],
    weights: CostWeights,
    *,
    methods: Sequence[str] | None = None,
    fixed_year: pd.Period | str | None = None,
    link: Link = "period",
    name: str = "Own cost index",
) -> CostIndex:
    """Blend component indexes into an own cost index (see the module notes).

    ``methods``: any of ``fixed``, ``annual-chain``, ``tornqvist`` (default: all three, or
    ``fixed`` alone when the weights hold a single year). ``fixed_year``: the weights year
    used by the fixed-weight version (default: the year of the first period blended, else
    the first weights year). ``link``: ``period`` or ``annual`` (see module notes).
    """
    wide, ranks, freq, warnings = _components_frame(components)
    warnings = list(weights.warnings) + warnings
    yf = weights.year_frequency
    shares = weights.shares
    comp_names = list(wide.columns)
    extra = sorted(set(shares.columns) - set(comp_names))
    lacking = sorted(set(comp_names) - set(shares.columns))
    if extra or lacking:
        raise fail(WS101, "weights do not cover the components",
                   expected="one weight per component: " + ", ".join(comp_names),
                   found="; ".join(filter(None, [
                       f"no weight for {', '.join(lacking)}" if lacking else "",
                       f"weights for unknown {', '.join(extra)}" if extra else ""])),
                   fix="Name the weights exactly as the component indexes.")
    shares = shares[comp_names]
    if link not in ("period", "annual"):
        raise fail(WS106, f"unknown link {link!r}", expected="period or annual",
                   found=str(link), fix="Use period (one-period overlap) or annual.")
    if methods is None:
        methods = list(METHODS) if len(shares) > 1 else ["fixed"]
    methods = [str(m).lower() for m in methods]
    unknown = [m for m in methods if m not in METHODS]
    if unknown or not methods:
        raise fail(WS106, f"unknown blending method {', '.join(unknown) or '(none)'}",
                   expected=", ".join(METHODS), found=", ".join(unknown) or "none",
                   fix="Choose fixed, annual-chain or tornqvist.")
    try:
        years = wide.index.asfreq(yf.pandas_freq)
    except (ValueError, TypeError):
        raise fail(WS103, "component periods do not fit the weights years",
                   expected=f"periods inside {yf.describe()}", found=freq.describe(),
                   fix="Use weights years that whole component periods fit into.") from None
    if freq.periods_per_year < 1 or (
            freq.code in ("A", "FY") and freq.pandas_freq != yf.pandas_freq):
        raise fail(WS103, "component years differ from the weights years",
                   expected=yf.describe(), found=freq.describe(),
                   fix="Give weights for the same kind of year as the components.")
    uyears = pd.PeriodIndex(pd.unique(years))
    X = wide.to_numpy()
    n_t = len(wide)
    if link == "annual":
        first_year = years == uyears[0]
        ref_row = X[first_year].mean(axis=0)
    else:
        ref_row = X[0]

    needs_every_year = any(m != "fixed" for m in methods)
    if needs_every_year:
        missing = [y for y in uyears if y not in shares.index]
        if missing:
            raise fail(WS103, "years without weights",
                       expected=f"weights for every year blended ({yf.labels(uyears)[0]} to "  # type: ignore[arg-type]
                       f"{yf.labels(uyears)[-1]})",  # type: ignore[arg-type]
                       found="none for " + ", ".join(yf.labels(pd.PeriodIndex(missing))),
                       fix="Add the missing years' weights, or blend with fixed weights only.")
    if fixed_year is None:
        fy = uyears[0] if uyears[0] in shares.index else shares.index[0]
    else:
        fy = fixed_year if isinstance(fixed_year, pd.Period) else _year(str(fixed_year), yf)
        if fy not in shares.index:
            raise fail(WS103, "no weights for the fixed-weight year",
                       expected="one of " + ", ".join(weights.labels()), found=yf.label(fy),
                       fix="Choose a year the weights file covers.")

    out: dict[str, np.ndarray] = {}
    for m in methods:
        if m == "fixed":
            w = shares.loc[fy].to_numpy()
            out[m] = (X / ref_row) @ w
        elif m == "annual-chain":
            level = np.empty(n_t)
            for k, y in enumerate(uyears):
                rows = np.flatnonzero(years == y)
                w = shares.loc[y].to_numpy()
                if k == 0:
                    ref, scale = ref_row, 1.0
                else:
                    prev = np.flatnonzero(years == uyears[k - 1])
                    if link == "period":
                        ref, scale = X[prev[-1]], level[prev[-1]]
                    else:
                        ref, scale = X[prev].mean(axis=0), level[prev].mean()
                level[rows] = scale * ((X[rows] / ref) @ w)
            out[m] = level
        else:  # tornqvist
            s = shares.loc[years].to_numpy()  # shares of each period's year
            logrel = np.log(X[1:] / X[:-1])
            links = np.exp((0.5 * (s[1:] + s[:-1]) * logrel).sum(axis=1))
            chain = np.concatenate([[1.0], np.cumprod(links)])
            if link == "annual":
                chain = chain / chain[years == uyears[0]].mean()
            out[m] = chain
    values = pd.DataFrame({m: 100.0 * v for m, v in out.items()}, index=wide.index)

    if link == "annual":
        reference = yf.label(uyears[0])
        if (years == uyears[0]).sum() < freq.periods_per_year:
            warnings.append(warn(WS107, "the first year is incomplete; its average is the "
                                 "reference", found=f"{int((years == uyears[0]).sum())} "
                                 f"of {freq.periods_per_year} periods in {reference}",
                                 fix="Start the components at the beginning of a year."))
    else:
        reference = freq.label(wide.index[0])
    worst = ranks.to_numpy().max(axis=1).astype(int)
    status = pd.Series(np.asarray(STATUSES, dtype=object)[worst], index=wide.index,
                       name="status")
    gap: dict[str, float] = {}
    if "fixed" in out and n_t > 1:
        rates = growth.cagr(values, wide.index[0], wide.index[-1], freq)
        for m in methods:
            if m != "fixed":
                gap[m] = 100.0 * float(rates["fixed"] - rates[m])
    return CostIndex(name, values, freq, weights, fy, link, reference, status,
                     tuple(comp_names), gap, tuple(warnings))


def _year(text: str, yf: Frequency) -> pd.Period:
    from .labels import parse_label

    p, _ = parse_label(text, yf.fy_start if yf.code == "FY" else None)
    return p.asfreq(yf.pandas_freq)


def blend_recipe(recipe: Mapping[str, object], components: Sequence[Series]) -> CostIndex:
    """Rebuild a cost index from :meth:`CostIndex.recipe` and the component indexes
    (looked up by name; extra series are ignored)."""
    try:
        names = [str(n) for n in recipe["components"]]  # type: ignore[union-attr]
        yf_raw = recipe["year_frequency"]
        yf = Frequency(str(yf_raw["code"]), int(yf_raw["fy_start"]))  # type: ignore[index,arg-type]
        weights_raw = recipe["weights"]
    except (KeyError, TypeError, ValueError) as exc:
        raise fail(WS106, "own cost index recipe is incomplete",
                   expected="components, year_frequency and weights",
                   found=f"missing or bad {exc}", fix="Rebuild the index in the workshop.") from None
    by_name = {c.name: c for c in components}
    lacking = [n for n in names if n not in by_name]
    if lacking:
        raise fail(WS101, "component indexes of the recipe are missing",
                   expected=", ".join(names), found="no " + ", ".join(lacking),
                   fix="Load the component indexes the own cost index was built from.")
    labels = list(weights_raw)  # type: ignore[arg-type]
    idx = pd.PeriodIndex([_year(lab, yf) for lab in labels], freq=yf.pandas_freq)
    wide = pd.DataFrame([weights_raw[lab] for lab in labels], index=idx)  # type: ignore[index]
    weights = make_weights(wide[names], weights_as="shares")
    given = recipe.get("weights_given_as", "shares")
    weights = CostWeights(weights.shares, given, weights.year_frequency)  # type: ignore[arg-type]
    return blend([by_name[n] for n in names], weights,
                 methods=list(recipe.get("methods") or METHODS),  # type: ignore[call-overload]
                 fixed_year=str(recipe.get("fixed_year")) if recipe.get("fixed_year") else None,
                 link=str(recipe.get("link", "period")),  # type: ignore[arg-type]
                 name=str(recipe.get("name", "Own cost index")))
