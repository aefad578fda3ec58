"""Revision risk of figures that rest on preliminary index values.

A workspace that holds several vintages of one index knows how that index's preliminary
values were revised in the past. This module measures it and turns it into a band around
the current preliminary stretch:

1. :func:`revision_history` -- every past revision of a preliminary value, by **age**:
   months since the value was first released. The release of a period is taken as the
   end of the period plus the index's publication lag (the shortest gap, in months,
   between a vintage's as-of date and the last period it publishes), so a vintage's
   newest value has age 0. A revision is ``100 x (final / earlier - 1)`` percent, where
   *final* is the value the latest vintage marks final and *earlier* the preliminary
   value a vintage printed at that age. Values still preliminary in every later vintage
   are not counted yet (their revision is not over).
2. :func:`revision_band` -- for every preliminary value of the current vintage, the
   empirical quantiles (default 10 % and 90 %) of the past revisions of values of the
   same age. Where fewer than ``min_revisions`` revisions have that age, the nearest
   ages are pooled with it until there are enough (the band table says which ages).
   Below ``min_revisions`` revisions in all there is no band, only a coded warning
   (WS310). With money series and a base period, the series are deflated three times
   by the same engine (:func:`pipeline.deflate.deflate`): with the current values, with
   every preliminary value at its low quantile and with every one at its high quantile.
   The real values and the real growth under the two outer cases give the band: "past
   revisions of this index would put it between ...". Moving every preliminary value to
   the same quantile at once is a deliberate choice: revisions of neighbouring months
   of an index tend to go the same way, and treating them as independent would make the
   band of an annual total too narrow.

This is an empirical statement about this index's own history, not a probability model;
the method note says how many revisions the band rests on.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from .errors import Problem, RealbasisError, register, warn
from .model import CAUTIONS, Frequency, Kind, Series
from .periods import Span, last_months

WS310 = register("WS310", "too few past revisions for a revision band")
WS311 = register("WS311", "no preliminary values to band")
WS312 = register("WS312", "index vintages left out of the revision history")
WS313 = register("WS313", "vintages stated on different reference periods")

DEFAULT_QUANTILES: tuple[float, float] = (0.10, 0.90)
MIN_REVISIONS = 8
HISTORY_COLUMNS = ("vintage", "period", "age_months", "value", "final", "revision_pct")
AGE_COLUMNS = ("age_months", "revisions", "mean_pct", "median_pct", "low_pct", "high_pct",
               "min_pct", "max_pct")
INDEX_BAND_COLUMNS = ("period", "value", "status", "age_months", "ages_pooled",
                      "revisions_used", "low_pct", "high_pct", "low", "high")
REAL_BAND_COLUMNS = ("series", "period", "real", "real_low", "real_high", "growth_pct",
                     "growth_low_pct", "growth_high_pct", "status")


def _pct(q: float) -> str:
    return f"{100 * q:g} %"


def _signed(x: float, decimals: int = 1) -> str:
    return f"{x:+.{decimals}f} %"


def _growth_sentence(value: float, low: float, high: float) -> str:
    """'+1.7 %; ... between +1.4 % and +2.0 %', with a second decimal when one hides the
    width of the band."""
    d = 1 if _signed(low) != _signed(high) else 2
    return (f"{_signed(value, d)}; past revisions of this index would put it between "
            f"{_signed(low, d)} and {_signed(high, d)}.")


# --------------------------------------------------------------------------- history


@dataclass(frozen=True, eq=False)
class RevisionHistory:
    """Past revisions of one index's preliminary values, by age.

    ``revisions``: one row per (vintage, period) whose preliminary value has since been
    finalised -- ``vintage, period, age_months, value, final, revision_pct``.
    ``by_age``: ``age_months, revisions, mean_pct, median_pct, low_pct, high_pct,
    min_pct, max_pct`` (low/high at ``quantiles``). ``vintages``: the as-of dates used,
    oldest first; ``lag_months``: the publication lag found.
    """

    name: str
    vintages: tuple[str, ...]
    lag_months: int
    revisions: pd.DataFrame
    by_age: pd.DataFrame
    quantiles: tuple[float, float]
    warnings: tuple[Problem, ...] = ()

    @property
    def count(self) -> int:
        return len(self.revisions)

    def method_note(self) -> tuple[str, ...]:
        lo, hi = self.quantiles
        return (
            f"Revision history of {self.name}: {self.count} past revision(s) of preliminary "
            f"values measured from {len(self.vintages)} vintage(s)"
            + (f" ({self.vintages[0]} to {self.vintages[-1]})" if self.vintages else "")
            + "; revision = final value / value printed earlier - 1, in percent.",
            f"Age = months since the value was first released, taking the release as the "
            f"end of its period plus the publication lag found ({self.lag_months} "
            "month(s)); values not yet final in any vintage are not counted.",
            f"Distribution by age: mean, median, the {_pct(lo)} and {_pct(hi)} quantiles, "
            "smallest and largest revision.",
        )


def _as_of_month(key: str) -> int | None:
    """The month ordinal of an as-of date (ISO text); None when it is not a date."""
    if not str(key).strip():
        return None
    try:
        stamp = pd.Timestamp(key)
    except (ValueError, TypeError):
        return None
    if pd.isna(stamp):
        return None
    return int(pd.Period(stamp, freq="M").ordinal)


def _usable_vintages(vintages: Mapping[str, Series], current: str | None
                     ) -> tuple[list[tuple[str, int, Series]], str, list[Problem]]:
    """Dated vintages of the current one's frequency, up to ``current``, oldest first."""
    warnings: list[Problem] = []
    keys = sorted(vintages)
    cur = current if current is not None else (keys[-1] if keys else "")
    if cur not in vintages:
        cur = keys[-1] if keys else ""
    ref = vintages.get(cur)
    out: list[tuple[str, int, Series]] = []
    undated, other = [], []
    for k in keys:
        s = vintages[k]
        month = _as_of_month(k)
        if month is None:
            undated.append(k or "(no date)")
            continue
        if ref is not None and s.frequency != ref.frequency:
            other.append(k)
            continue
        if k <= cur:
            out.append((k, month, s))
    name = ref.name if ref is not None else "index"
    if undated:
        warnings.append(warn(WS312, f"{len(undated)} load(s) of {name!r} have no as-of date "
                        "and were left out of the revision history",
                        found=", ".join(undated), series=name,
                        fix="Give each load its as-of date (vintage).", remedy="as_of"))
    if other:
        warnings.append(warn(WS312, f"{len(other)} vintage(s) of {name!r} have another "
                        "frequency and were left out of the revision history",
                        found=", ".join(other), series=name,
                        fix="Keep vintages of one index at one frequency."))
    refs = {s.reference for _, _, s in out if s.reference}
    if len(refs) > 1:
        warnings.append(warn(WS313, f"the vintages of {name!r} are stated on different "
                        "reference periods, so their values are not comparable as printed",
                        expected="one reference period", found=", ".join(sorted(refs)),
                        series=name, fix="Rebase every vintage to one reference period "
                        "first.", remedy="rebase_vintages"))
        out = []
    return out, cur, warnings


def _lag(vins: Sequence[tuple[str, int, Series]]) -> int:
    lags = []
    for _, month, s in vins:
        st = s.status_or_final()
        v = s.values[(st != "projected").to_numpy() & s.values.notna().to_numpy()]
        if len(v):
            lags.append(month - int(last_months(v.index[-1:])[0]))
    return max(0, min(lags)) if lags else 0


def _ages(s: Series, as_of_month: int, lag: int) -> np.ndarray:
    return as_of_month - np.asarray(last_months(s.index)) - lag


def _summary(revisions: pd.DataFrame, quantiles: tuple[float, float]) -> pd.DataFrame:
    if revisions.empty:
        return pd.DataFrame(columns=list(AGE_COLUMNS))
    g = revisions.groupby("age_months")["revision_pct"]
    lo, hi = quantiles
    out = pd.DataFrame({
        "revisions": g.size(),
        "mean_pct": g.mean(),
        "median_pct": g.median(),
        "low_pct": g.quantile(lo),
        "high_pct": g.quantile(hi),
        "min_pct": g.min(),
        "max_pct": g.max(),
    }).reset_index()
    return out[list(AGE_COLUMNS)]


def revision_history(vintages: Mapping[str, Series], *, current: str | None = None,
                     quantiles: tuple[float, float] = DEFAULT_QUANTILES) -> RevisionHistory:
    """How the preliminary values of one index were revised, by age, from its vintages
    (``{as_of_date: Series}``, the shape of ``Workspace.indexes[name]``). ``current``:
    measure only what was known as of that vintage (default: the latest)."""
    vins, cur, warnings = _usable_vintages(vintages, current)
    name = vins[-1][2].name if vins else (vintages[cur].name if cur in vintages else "index")
    lag = _lag(vins)
    rows: list[dict[str, object]] = []
    if len(vins) >= 2:
        # final value of each period: from the latest vintage that marks it final
        finals = []
        for _, _, s in vins:
            st = s.status_or_final()
            ok = (st == "final").to_numpy() & s.values.notna().to_numpy()
            finals.append(s.values[ok])
        for i, (k, month, s) in enumerate(vins[:-1]):
            st = s.status_or_final()
            pre = (st == "preliminary").to_numpy() & s.values.notna().to_numpy()
            if not pre.any():
                continue
            idx = s.index[pre]
            # the latest later vintage that marks the period final gives its final value;
            # a value still preliminary in every later vintage is not counted yet
            final = pd.Series(dtype=float)
            for f in finals[i + 1:]:
                final = f if final.empty else f.combine_first(final)
            fin_idx = idx[np.asarray(idx.isin(final.index))]
            if not len(fin_idx):
                continue
            vals = s.values.reindex(fin_idx).to_numpy(dtype=float)
            fv = final.reindex(fin_idx).to_numpy(dtype=float)
            ages = _ages(s, month, lag)[np.asarray(s.index.get_indexer(fin_idx))]
            labels = s.frequency.labels(fin_idx)
            for lab, a, v, f in zip(labels, ages, vals, fv, strict=True):
                if v > 0 and math.isfinite(f):
                    rows.append({"vintage": k, "period": lab, "age_months": int(a),
                                 "value": float(v), "final": float(f),
                                 "revision_pct": 100.0 * (f / v - 1.0)})
    revisions = pd.DataFrame(rows, columns=list(HISTORY_COLUMNS))
    if not revisions.empty:
        revisions["age_months"] = revisions["age_months"].astype(int)
    return RevisionHistory(name, tuple(k for k, _, _ in vins), lag, revisions,
                           _summary(revisions, quantiles), tuple(quantiles), tuple(warnings))


# --------------------------------------------------------------------------- band


@dataclass(frozen=True, eq=False)
class RevisionBand:
    """The range past revisions imply for the current preliminary stretch of an index
    and for the real figures resting on it. One call gives a screen or an export all of
    it: the band tables, the sentences, the method note, the warnings.

    ``index_band``: one row per preliminary value of the current vintage --
    ``period, value, status, age_months, ages_pooled, revisions_used, low_pct,
    high_pct, low, high``. ``real_band`` (with money series): ``series, period, real,
    real_low, real_high, growth_pct, growth_low_pct, growth_high_pct, status`` (growth
    year on year, in percent) for every period whose real value or growth moves within
    the band. ``statements``: plain sentences ("real growth 2026 on 2025: +1.7 %; past
    revisions of this index would put it between +1.4 % and +2.0 %"). ``available`` is
    False when the band was refused; the warnings say why (WS310, WS311).
    """

    name: str
    current: str
    history: RevisionHistory
    quantiles: tuple[float, float]
    min_revisions: int
    index_band: pd.DataFrame
    real_band: pd.DataFrame
    statements: tuple[str, ...]
    base: str | None = None
    frequency: Frequency | None = None
    warnings: tuple[Problem, ...] = ()

    @property
    def available(self) -> bool:
        return not self.index_band.empty

    @property
    def revisions_used(self) -> int:
        return self.history.count

    def method_note(self) -> tuple[str, ...]:
        lo, hi = self.quantiles
        head = (f"Revision band of {self.name} (vintage {self.current or 'not stated'}): an "
                f"empirical quantile band, the {_pct(lo)} and {_pct(hi)} quantiles of the "
                f"past revisions of values of the same age, resting on "
                f"{self.history.count} past revision(s) from {len(self.history.vintages)} "
                f"vintage(s); no band below {self.min_revisions} revisions.")
        notes = [head, *self.history.method_note()]
        if self.available:
            pooled = self.index_band["ages_pooled"].astype(str)
            notes.append(
                f"Where fewer than {self.min_revisions} revisions have a value's age, the "
                "nearest ages are pooled with it (ages used: "
                + ", ".join(f"{a} -> {p}" for a, p in zip(self.index_band["age_months"],
                                                          pooled, strict=True)) + ").")
            if not self.real_band.empty:
                notes.append(
                    f"Real values in constant {self.base} dollars were computed three times "
                    "by the same deflation: with the current index values, with every "
                    f"preliminary value moved to its {_pct(lo)} quantile, and with every one "
                    f"moved to its {_pct(hi)} quantile (all at once: revisions of "
                    "neighbouring periods tend to go the same way); the band is the range "
                    "between the two outer results, for real values and for real growth "
                    "(year on year).")
        notes.append("This is what the index's own past revisions imply, not a forecast or a "
                     "probability; projected values are not banded.")
        return tuple(notes)

    def table(self) -> pd.DataFrame:
        """The real band when money series were given, else the index band."""
        return self.real_band if not self.real_band.empty else self.index_band

    def as_dict(self) -> dict[str, object]:
        """JSON-safe: everything the band says (the JSON export's ``revision_bands``)."""
        def records(frame: pd.DataFrame) -> list[dict[str, object]]:
            out = []
            for rec in frame.to_dict(orient="records"):
                out.append({k: (None if isinstance(v, float) and not math.isfinite(v)
                                else (v.item() if isinstance(v, np.generic) else v))
                            for k, v in rec.items()})
            return out

        return {
            "index": self.name,
            "vintage": self.current,
            "available": self.available,
            "quantiles": list(self.quantiles),
            "min_revisions": self.min_revisions,
            "revisions_used": self.history.count,
            "vintages_used": list(self.history.vintages),
            "base": self.base,
            "frequency": self.frequency.describe() if self.frequency else None,
            "statements": list(self.statements),
            "method": list(self.method_note()),
            "revisions_by_age": records(self.history.by_age),
            "index_band": records(self.index_band),
            "real_band": records(self.real_band),
            "warnings": [p.as_dict() for p in self.warnings],
            "cautions": list(CAUTIONS),
        }


def _pooled(ages_hist: np.ndarray, counts: np.ndarray, age: int, minimum: int) -> list[int]:
    """Ages nearest to ``age`` (itself first) until they hold ``minimum`` revisions."""
    order = np.lexsort((ages_hist, np.abs(ages_hist - age)))
    chosen: list[int] = []
    total = 0
    for i in order:
        if total >= minimum:
            break
        # take every age at the same distance together, so the choice is symmetric
        chosen.append(int(ages_hist[i]))
        total += int(counts[i])
    far = max(abs(a - age) for a in chosen)
    return sorted(int(a) for a in ages_hist if abs(int(a) - age) <= far)


def _ages_text(ages: list[int]) -> str:
    return str(ages[0]) if len(ages) == 1 else f"{ages[0]}-{ages[-1]}" if ages == list(
        range(ages[0], ages[-1] + 1)) else ",".join(map(str, ages))


def _refused(name: str, current: str, history: RevisionHistory, quantiles: tuple[float, float],
             minimum: int, warnings: list[Problem], base: str | None,
             frequency: Frequency | None) -> RevisionBand:
    return RevisionBand(name, current, history, tuple(quantiles), minimum,
                        pd.DataFrame(columns=list(INDEX_BAND_COLUMNS)),
                        pd.DataFrame(columns=list(REAL_BAND_COLUMNS)), (), base, frequency,
                        tuple(warnings))


def revision_band(
    vintages: Mapping[str, Series],
    series: Sequence[Series] = (),
    base: str | Span | pd.Period | None = None,
    *,
    current: str | None = None,
    to: Frequency | None = None,
    kind: Kind | None = None,
    fy_start: int | None = None,
    interpolate: bool | str = False,
    quantiles: tuple[float, float] = DEFAULT_QUANTILES,
    min_revisions: int = MIN_REVISIONS,
) -> RevisionBand:
    """The revision band of an index's current preliminary stretch, and (with money
    ``series`` and a ``base``) of the real values and real growth resting on it.

    ``vintages``: ``{as_of_date: Series}`` of one index (``Workspace.indexes[name]``);
    ``current``: the vintage to band (default the latest). ``to``, ``kind``,
    ``fy_start``, ``interpolate``: as for :func:`pipeline.deflate.deflate`.
    ``quantiles``: the band's lower and upper quantile (default 10 % and 90 %);
    ``min_revisions``: fewer past revisions in all give no band (WS310)."""
    lo, hi = (float(quantiles[0]), float(quantiles[1]))
    if not 0.0 <= lo < hi <= 1.0:
        raise ValueError("quantiles must satisfy 0 <= low < high <= 1")
    q = (lo, hi)
    history = revision_history(vintages, current=current, quantiles=q)
    keys = sorted(vintages)
    cur = current if current in vintages else (keys[-1] if keys else "")
    index = vintages.get(cur)
    name = index.name if index is not None else history.name
    warnings: list[Problem] = list(history.warnings)
    base_label = None if base is None else (base.label if isinstance(base, Span) else str(base))
    month = _as_of_month(cur)
    if index is None or month is None or history.count < min_revisions:
        warnings.append(warn(
            WS310, f"no revision band for {name!r}: too few past revisions to measure from",
            expected=f"at least {min_revisions} past revisions of preliminary values "
            "(several vintages of the index, with statuses)",
            found=f"{history.count} revision(s) from {len(history.vintages)} dated "
            "vintage(s)", series=name,
            fix="Add earlier vintages of the index (each with its as-of date and which "
            "values were preliminary); until then the figures carry only the usual caution "
            "that preliminary values will be revised."))
        return _refused(name, cur, history, q, min_revisions, warnings, base_label, to)
    st = index.status_or_final()
    pre = (st == "preliminary").to_numpy() & index.values.notna().to_numpy()
    if not pre.any():
        warnings.append(warn(WS311, f"vintage {cur} of {name!r} has no preliminary values: "
                        "nothing to band", found="every value final or projected",
                        series=name, fix="No action needed."))
        return _refused(name, cur, history, q, min_revisions, warnings, base_label, to)
    # --- the index band
    ages_now = _ages(index, month, history.lag_months)[pre]
    by_age = history.by_age
    ages_hist = by_age["age_months"].to_numpy(dtype=int)
    counts = by_age["revisions"].to_numpy(dtype=int)
    rev = history.revisions
    rows = []
    low_f = np.ones(len(index.values))
    high_f = np.ones(len(index.values))
    positions = np.flatnonzero(pre)
    labels = index.frequency.labels(index.index)
    for pos, age in zip(positions, ages_now, strict=True):
        pool = _pooled(ages_hist, counts, int(age), min_revisions)
        sample = rev.loc[rev["age_months"].isin(pool), "revision_pct"].to_numpy(dtype=float)
        q_lo, q_hi = np.quantile(sample, [lo, hi])
        v = float(index.values.iloc[pos])
        low_f[pos], high_f[pos] = 1 + q_lo / 100, 1 + q_hi / 100
        rows.append({"period": labels[pos], "value": v, "status": "preliminary",
                     "age_months": int(age), "ages_pooled": _ages_text(pool),
                     "revisions_used": len(sample), "low_pct": float(q_lo),
                     "high_pct": float(q_hi), "low": v * low_f[pos], "high": v * high_f[pos]})
    index_band = pd.DataFrame(rows, columns=list(INDEX_BAND_COLUMNS))
    last = index_band.iloc[-1]
    statements = [
        f"{name}, {last['period']}: {last['value']:.3f} (preliminary); past revisions of "
        f"this index would put it between {last['low']:.3f} and {last['high']:.3f}."]
    real_band = pd.DataFrame(columns=list(REAL_BAND_COLUMNS))
    freq = to
    if series and base is not None:
        try:
            real_band, freq, more = _real_band(index, low_f, high_f, series, base, to=to,
                                               kind=kind, fy_start=fy_start,
                                               interpolate=interpolate)
            statements.extend(more)
        except RealbasisError as err:  # the index band stands; say why the real one does not
            warnings.extend(p.as_warning() for p in err.problems)
    return RevisionBand(name, cur, history, q, min_revisions, index_band, real_band,
                        tuple(statements), base_label, freq, tuple(warnings))


def _real_band(index: Series, low_f: np.ndarray, high_f: np.ndarray,
               series: Sequence[Series], base: str | Span | pd.Period, *,
               to: Frequency | None, kind: Kind | None, fy_start: int | None,
               interpolate: bool | str) -> tuple[pd.DataFrame, Frequency, list[str]]:
    from . import growth
    from .deflate import deflate
    from .revisions import _covered_months, _trim

    first, last = _covered_months(index)
    kept = [_trim(s, first, last) for s in series]  # the periods the index reaches
    series = [s for s in kept if s.values.notna().any()] or list(series)
    central = index
    low = index.with_values(index.values * low_f, name=f"{index.name} (low)")
    high = index.with_values(index.values * high_f, name=f"{index.name} (high)")
    res = deflate(list(series), [central, low, high], base, to=to, kind=kind,
                  fy_start=fy_start, interpolate=interpolate)
    freq = res.frequency
    reals = [res.real_frame(d) for d in range(3)]
    yoy = [growth.year_on_year(r, freq).values * 100 for r in reals]
    status = res.status_frame(0)
    labels = np.array(freq.labels(res.periods), dtype=object)
    parts = []
    statements = []
    for name in res.series_names:
        nominal = res.nominal_frame()[name].notna().to_numpy()
        r0, r1, r2 = (r[name].to_numpy() for r in reals)
        g0, g1, g2 = (g[name].to_numpy() for g in yoy)
        frame = pd.DataFrame({
            "series": name, "period": labels, "real": r0,
            "real_low": np.fmin(r1, r2), "real_high": np.fmax(r1, r2),
            "growth_pct": g0, "growth_low_pct": np.fmin(g1, g2),
            "growth_high_pct": np.fmax(g1, g2),
            "status": status[name].to_numpy(dtype=object)})
        width = np.nan_to_num(frame["real_high"] - frame["real_low"]) + np.nan_to_num(
            frame["growth_high_pct"] - frame["growth_low_pct"])
        frame = frame[nominal & (width > 1e-12 * np.maximum(1.0, np.abs(r0)))]
        parts.append(frame)
        grown = frame.dropna(subset=["growth_pct"])
        if len(grown):
            rec = grown.iloc[-1]
            p = res.periods[list(labels).index(rec["period"])]
            prev = freq.label(p - freq.periods_per_year)
            statements.append(
                f"{name}: real growth {rec['period']} on {prev}: "
                + _growth_sentence(rec["growth_pct"], rec["growth_low_pct"],
                                   rec["growth_high_pct"]))
    table = (pd.concat(parts, ignore_index=True) if parts
             else pd.DataFrame(columns=list(REAL_BAND_COLUMNS)))
    table["status"] = table["status"].astype(object)
    return table[list(REAL_BAND_COLUMNS)], freq, statements
