"""Which deflators can serve a series, and the same series compared across deflators.

**Serving.** A deflator *serves* a money series at a result frequency and base when the
engine can deflate every period of the series with it: its periods nest with the
series' (or can be brought to them), it has a value for the base and for every period
the series needs. :func:`serve_check` asks the engine itself (:func:`pipeline.deflate.
deflate` on that one series), so the answer is never a second opinion, and says for each
candidate, in words, why it cannot serve and what would make it serve:

* ``serves`` — covers everything as it is (with interpolation when that was allowed);
* ``serves_in_part`` — covers the base and some of the periods: the others are left out,
  and when they all lie after the deflator's last value a projection until a stated
  period would reach them (:attr:`Fit.project_until`, checked by projecting it);
* ``needs_interpolation`` — its periods do not fit the series' or the base's (calendar
  years against fiscal years starting July; quarters against a monthly series whose
  results are asked monthly) and it serves once interpolated (each value flagged), or at
  a longer result frequency (:attr:`Fit.result_frequency`);
* ``needs_projection`` — it ends before the base (or the base's outlay years) and serves
  once projected until :attr:`Fit.project_until`;
* ``cannot`` — anything else (not a price index, gaps inside, base before its start…).

**Comparing.** :func:`compare_deflators` deflates the series by every deflator that can
serve it, cuts the series to the periods all of them cover (the method note says so),
computes nominal, price and real growth per deflator by the chosen measure, and gives the
plain verdict on the sign of real growth over those deflators. Deflators that cannot
serve are left out, named, and say why (DF041 warnings with the remedy each needs), so
one unusable deflator never stops the comparison.

Result frequencies chosen by name (``auto``, ``native``, ``M``, ``Q``, ``A``, ``FY``,
``FY-7``) are resolved by :func:`result_frequency`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Literal

import numpy as np
import pandas as pd

from . import growth
from .deflate import DeflationResult, deflate
from .errors import Problem, RealbasisError, fail, register, warn
from .labels import PE102
from .model import STATUS_RANK, Frequency, Kind, Series
from .periods import Span, parse_span, relation

DF040 = register("DF040", "no chosen deflator can serve the series")
DF041 = register("DF041", "deflator left out: it cannot serve the series")
DF042 = register("DF042", "result frequency not understood")

Verdict = Literal["serves", "serves_in_part", "needs_interpolation", "needs_projection",
                  "cannot"]
VERDICT_WORDS: Mapping[str, str] = {
    "serves": "serves",
    "serves_in_part": "serves part of the periods",
    "needs_interpolation": "serves only if interpolated",
    "needs_projection": "serves only if projected",
    "cannot": "cannot serve",
}
_FREQ_CODES = {"M", "Q", "A", "FY"}
_FIT_CODES = {"PE201", "PE203", "PE204", "PE206", "DF004"}
_COVER_CODES = {"DF001", "IX001"}


# --------------------------------------------------------------------------- frequencies


def result_frequency(choice: str | Frequency | None, series: Series | None = None,
                     deflators: Sequence[Series] = (), *, fy_start: int | None = None
                     ) -> Frequency | None:
    """The frequency of the results from a choice: a :class:`Frequency`; ``None``,
    ``native`` (the series' own); ``M``, ``Q``, ``A``; ``FY`` (fiscal years of
    ``fy_start``, else of the series); ``FY-7`` (fiscal years starting July); ``auto``:
    the series' own, or the least frequent deflator's when that is coarser (the engine
    refuses to deflate a series by a less frequent index without interpolation),
    expressed in the series' fiscal year when the series is fiscal.
    DF042 for a choice it does not know."""
    if isinstance(choice, Frequency):
        return choice
    code = (choice or "native").strip()
    if code == "native":
        return None
    if code == "auto":
        if series is None or not deflators:
            return None
        coarsest = min(deflators, key=lambda d: d.frequency.periods_per_year).frequency
        if coarsest.periods_per_year < series.frequency.periods_per_year:
            if coarsest.code == "Q" and series.frequency.is_fiscal:
                return Frequency("Q", series.frequency.fy_start)
            if coarsest.code == "A" and series.frequency.is_fiscal:
                return Frequency("FY", series.frequency.fy_start)
            return coarsest
        return None
    upper = code.upper()
    if upper.startswith("FY-") and upper[3:].isdigit() and 1 <= int(upper[3:]) <= 12:
        return Frequency("FY", int(upper[3:]))
    if upper == "FY":
        start = fy_start or (series.frequency.fy_start if series is not None
                             and series.frequency.is_fiscal else None)
        if start is None:
            raise fail(PE102, "results by fiscal year need the month the fiscal year "
                       "starts in", expected="a fiscal start month (1-12)",
                       found="fiscal years asked and no start month",
                       fix="Say which month the fiscal year starts in.",
                       remedy="fiscal_start")
        return Frequency("FY", start)
    if upper in _FREQ_CODES:
        if upper == "Q" and fy_start and fy_start != 1 and series is not None \
                and series.frequency.is_fiscal:
            return Frequency("Q", fy_start)
        return Frequency(upper)  # type: ignore[arg-type]
    raise fail(DF042, f"result frequency {code!r} not understood",
               expected="auto, native, M, Q, A, FY or FY-<month>", found=repr(code),
               fix="Choose monthly, quarterly, calendar years or fiscal years.",
               remedy="result_frequency")


# --------------------------------------------------------------------------- serving


@dataclass(frozen=True)
class Fit:
    """Whether one deflator can serve one series, and why not.

    ``reason``: one or two sentences in words ('' when it serves as it is). ``covers``:
    the first and last result period it deflates (None when none). ``missing``: result
    periods it leaves out. ``interpolated``: it serves (or would) through interpolation.
    ``project_until``: the period, in the deflator's own periods, a projection must
    reach for it to cover everything (checked by projecting). ``result_frequency``: a
    longer result frequency at which it serves without interpolation. ``problems``: the
    engine's coded problems behind the verdict.
    """

    deflator: str
    verdict: Verdict
    reason: str = ""
    frequency: Frequency | None = None
    covers: tuple[str, str] | None = None
    missing: tuple[str, ...] = ()
    interpolated: bool = False
    project_until: str | None = None
    result_frequency: Frequency | None = None
    problems: tuple[Problem, ...] = ()

    @property
    def usable(self) -> bool:
        """Can deflate the series as checked (all periods, or a part of them)."""
        return self.verdict in ("serves", "serves_in_part")

    @property
    def remedy(self) -> str:
        """The remedy key of what would make it serve ('' when none applies)."""
        if self.verdict == "needs_interpolation":
            return "result_frequency" if self.result_frequency is not None else "interpolate"
        if self.project_until:
            return "project_index"
        if self.verdict == "cannot" and self.problems:
            return self.problems[0].remedy
        return ""

    def text(self) -> str:
        """'Construction cost index: serves only if interpolated — calendar years …'."""
        head = f"{self.deflator}: {VERDICT_WORDS[self.verdict]}"
        return f"{head} — {self.reason}" if self.reason else head

    def as_problem(self, series: str) -> Problem:
        """The fit as a DF041 warning (a deflator left out), with its remedy."""
        return warn(DF041, f"{self.deflator!r} left out: it {VERDICT_WORDS[self.verdict]} "
                    f"{series!r}", expected="a deflator that covers the series and its base",
                    found=self.reason or VERDICT_WORDS[self.verdict],
                    fix=_fix_words(self), remedy=self.remedy, series=series,
                    column=self.deflator)


def _fix_words(f: Fit) -> str:
    if f.verdict == "needs_interpolation":
        return "Allow interpolation of this deflator, or show the results at a longer period."
    if f.project_until:
        return f"Project {f.deflator!r} until {f.project_until}."
    if f.verdict == "serves_in_part":
        return "Choose a deflator that covers every period of the series."
    return "Choose another deflator."


@dataclass(frozen=True)
class ServeCheck:
    """Every candidate deflator of one series, at one base and result frequency."""

    series: str
    base: str
    frequency: Frequency
    fits: tuple[Fit, ...]
    interpolate: bool = False
    warnings: tuple[Problem, ...] = ()

    def fit(self, deflator: str) -> Fit:
        for f in self.fits:
            if f.deflator == deflator:
                return f
        raise KeyError(deflator)

    @property
    def serving(self) -> tuple[str, ...]:
        """Deflators that cover every period and the base as they are."""
        return tuple(f.deflator for f in self.fits if f.verdict == "serves")

    @property
    def usable(self) -> tuple[str, ...]:
        """Deflators that can deflate the series (all periods, or some)."""
        return tuple(f.deflator for f in self.fits if f.usable)

    @property
    def left_out(self) -> tuple[Fit, ...]:
        """Deflators that cannot deflate the series as asked."""
        return tuple(f for f in self.fits if not f.usable)

    def alternatives(self, deflator: str) -> tuple[str, ...]:
        """Other deflators that serve every period, for a note on what ``deflator``
        leaves out (e.g. a budget's projected out-years)."""
        return tuple(f.deflator for f in self.fits
                     if f.verdict == "serves" and f.deflator != deflator)

    def reasons(self) -> dict[str, str]:
        """Deflator -> words on why it does not (fully) serve; only those that do not."""
        return {f.deflator: f.text() for f in self.fits if f.verdict != "serves"}

    def method_note(self) -> tuple[str, ...]:
        lines = [f"Deflators checked for {self.series!r} at base {self.base} "
                 f"({self.frequency.describe()}): "
                 + "; ".join(f"{f.deflator} {VERDICT_WORDS[f.verdict]}" for f in self.fits)
                 + "."]
        lines.extend(f.text() + "." for f in self.fits if f.reason)
        return tuple(lines)


def _attempt(s: Series, d: Series, base: Span, to: Frequency | None, fy: int | None,
             interpolate: bool, kind: Kind | None
             ) -> tuple[DeflationResult | None, tuple[Problem, ...]]:
    try:
        return deflate([s], [d], base, to=to, fy_start=fy, interpolate=interpolate,
                       kind=kind), ()
    except RealbasisError as err:
        return None, err.problems


def _months(s: Series) -> tuple[int, int] | None:
    v = s.values.dropna()
    if v.empty:
        return None
    return (int(v.index[0].asfreq("M", how="start").ordinal),
            int(v.index[-1].asfreq("M", how="end").ordinal))


def _trim(s: Series, first: int, last: int) -> Series | None:
    idx = s.values.index
    starts = np.asarray(idx.asfreq("M", how="start").asi8)
    ends = np.asarray(idx.asfreq("M", how="end").asi8)
    keep = (starts >= first) & (ends <= last)
    if keep.all():
        return s
    kept = s.values[keep]
    if kept.dropna().empty:
        return None
    status = s.status.reindex(kept.index) if s.status is not None else None
    return s.with_values(kept, status=status)


def _until_label(d: Series, last_month: int) -> str:
    """The deflator's own period that contains month ``last_month``."""
    p = pd.Period(ordinal=last_month, freq="M").asfreq(d.frequency.pandas_freq)
    return d.frequency.label(p)


def _labels(res: DeflationResult) -> list[str]:
    keep = ~np.isnan(res.nominal[:, 0])
    return [str(x) for x in res.period_labels[keep]]


def _frequency_reason(s: Series, d: Series, span: Span, out: Frequency,
                      problems: Sequence[Problem]) -> str:
    codes = {p.code for p in problems}
    sf, df = s.frequency, d.frequency
    if relation(sf, df) is None:
        return (f"its periods ({df.describe()}) do not nest with the series' "
                f"({sf.describe()}): each period of one straddles two of the other")
    if "PE203" in codes:
        return (f"the base {span.describe()} is not made of whole periods of it "
                f"({df.describe()})")
    if "PE204" in codes or "DF004" in codes:
        return (f"it is {df.describe()} and the series {sf.describe()}, with results asked "
                f"{out.describe()}")
    return problems[0].message if problems else ""


def _fit_one(s: Series, d: Series, span: Span, to: Frequency | None, fy: int | None,
             interpolate: bool, kind: Kind | None) -> Fit:
    from .projection import project

    base = span
    out = to or s.frequency
    if d.kind != "index":
        return Fit(d.name, "cannot", f"it is a {d.kind} series, not a price index",
                   d.frequency)
    res, probs = _attempt(s, d, base, to, fy, interpolate, kind)
    if res is not None:
        labs = _labels(res)
        return Fit(d.name, "serves", "", d.frequency, (labs[0], labs[-1]) if labs else None,
                   (), res.has_interpolation)
    codes = {p.code for p in probs}
    interp_used = interpolate
    interp_reason = ""
    alt: Frequency | None = None
    if codes & _FIT_CODES and not interpolate:
        interp_reason = _frequency_reason(s, d, span, out, probs)
        if "PE204" in codes:
            longer = result_frequency("auto", s, [d], fy_start=fy)
            if longer is not None and _attempt(s, d, base, longer, fy, False, kind)[0]:
                alt = longer
        res2, probs2 = _attempt(s, d, base, to, fy, True, kind)
        if res2 is not None:
            labs = _labels(res2)
            cover = f" covering {labs[0]} to {labs[-1]}" if labs else ""
            how = (f"; interpolated, it serves{cover} (each value flagged)"
                   + (f"; it also serves with results {alt.describe()}" if alt else ""))
            return Fit(d.name, "needs_interpolation", interp_reason + how, d.frequency,
                       (labs[0], labs[-1]) if labs else None, (), True, None, alt,
                       tuple(probs))
        probs, codes, interp_used = probs2, {p.code for p in probs2}, True
    if codes & _COVER_CODES:
        dm, sm = _months(d), _months(s)
        if dm is None or sm is None:
            return Fit(d.name, "cannot", "it has no values" if dm is None else
                       "the series has no values", d.frequency, problems=tuple(probs))
        need_first = min(sm[0], span.first_month)
        need_last = max(sm[1], span.last_month)
        base_in = dm[0] <= span.first_month and span.last_month <= dm[1]
        until = None
        if dm[1] < need_last and dm[0] <= need_first:
            label = _until_label(d, need_last)
            try:
                extended = project(d, 0.0, until=label).series
                if _attempt(s, extended, base, to, fy, interp_used, kind)[0] is not None:
                    until = label
            except RealbasisError:
                until = None
        lab_d = d.frequency.label
        vd = d.values.dropna()
        runs = f"it runs from {lab_d(vd.index[0])} to {lab_d(vd.index[-1])}"
        extra = (f"; projected until {until} it would serve" if until else "")
        interp_note = (" (interpolated, each value flagged)"
                       if interp_used and not interpolate else "")
        if base_in:
            part = _trim(s, dm[0], dm[1])
            if part is not None:
                res3, _ = _attempt(part, d, base, to, fy, interp_used, kind)
                if res3 is not None:
                    labs = _labels(res3)
                    full = _all_labels(s, out)
                    missing = tuple(x for x in full if x not in labs)
                    verdict: Verdict = ("needs_interpolation" if interp_used and not interpolate
                                        else "serves_in_part")
                    reason = (f"{runs}, so {_span_words(missing, full)} of the series "
                              f"{'is' if len(missing) == 1 else 'are'} left out"
                              f"{interp_note}{extra}")
                    if verdict == "needs_interpolation":
                        reason = f"{interp_reason}; {reason}"
                    return Fit(d.name, verdict, reason, d.frequency,
                               (labs[0], labs[-1]) if labs else None, missing, interp_used,
                               until, alt, tuple(probs))
        if until:
            reason = f"{runs}, which does not reach the base {span.label}{extra}"
            return Fit(d.name, "needs_projection", reason, d.frequency, None, (),
                       interp_used, until, alt, tuple(probs))
        if dm[0] > need_first:
            reason = (f"{runs}; it begins after the start of the periods the series or the "
                      f"base {span.label} need")
        else:
            gaps = "; ".join(dict.fromkeys(p.found for p in probs if p.code in _COVER_CODES))
            reason = f"{runs}, with values missing inside that span ({gaps})"
        return Fit(d.name, "cannot", reason, d.frequency, None, (), interp_used, None, alt,
                   tuple(probs))
    reason = interp_reason or "; ".join(dict.fromkeys(p.message for p in probs))
    return Fit(d.name, "cannot", reason, d.frequency, None, (), interp_used, None, alt,
               tuple(probs))


def _all_labels(s: Series, out: Frequency) -> list[str]:
    """Result-period labels the series would have at ``out`` (every complete period)."""
    from .periods import to_frequency

    if relation(s.frequency, out) == "same" or s.frequency == out:
        v = s.values.dropna()
        return out.labels(v.index.asfreq(out.pandas_freq, how="end"))
    try:
        conv = to_frequency(s.with_values(s.values, kind="flow" if s.kind == "index"
                                          else s.kind), out)
    except RealbasisError:
        return []
    return out.labels(conv.series.values.dropna().index)


def _span_words(labels: Sequence[str], order: Sequence[str] = ()) -> str:
    """'FY2027–FY2030', or 'FY2016–FY2018 and FY2027–FY2030' when the labels make more
    than one run of consecutive periods of ``order`` (all the series' periods)."""
    labs = list(labels)
    if not labs:
        return "no period"
    pos = {x: i for i, x in enumerate(order)}
    runs: list[list[str]] = []
    for x in labs:
        follows = (not pos or (x in pos and runs[-1][-1] in pos
                                and pos[x] == pos[runs[-1][-1]] + 1)) if runs else False
        if follows:
            runs[-1].append(x)
        else:
            runs.append([x])

    def one(run: list[str]) -> str:
        if len(run) == 1:
            return run[0]
        return f"{run[0]}–{run[-1]}" if len(run) > 2 else f"{run[0]} and {run[1]}"

    return " and ".join(one(r) for r in runs) if len(runs) <= 3 else (
        f"{', '.join(one(r) for r in runs[:2])} and {len(runs) - 2:,} more stretches")


def _fy_of(series: Series, fy_start: int | None, to: Frequency | None) -> int | None:
    if fy_start is not None:
        return fy_start
    if to is not None and to.is_fiscal:
        return to.fy_start
    return series.frequency.fy_start if series.frequency.is_fiscal else None


def serve_check(series: Series, deflators: Sequence[Series], base: str | Span, *,
                to: str | Frequency | None = None, fy_start: int | None = None,
                interpolate: bool = False, kind: Kind | None = None) -> ServeCheck:
    """For each candidate deflator: can it deflate ``series`` at ``base`` with results
    at ``to`` (a :class:`Frequency` or a choice for :func:`result_frequency`; with
    ``auto`` each deflator is judged at the frequency auto gives for it alone)?
    ``fy_start`` is the workspace's fiscal year (for FY labels in ``base``);
    ``interpolate`` whether interpolation is allowed (when not, a deflator that needs it
    is ``needs_interpolation``). Never raises for a deflator that cannot serve; raises
    only for a base that cannot be read (PE1xx/PE202)."""
    fy = _fy_of(series, fy_start, to if isinstance(to, Frequency) else None)
    span = parse_span(base, fy)
    fits = []
    for d in deflators:
        to_d = result_frequency(to, series, [d], fy_start=fy) if not isinstance(
            to, Frequency) else to
        fits.append(_fit_one(series, d, span, to_d, fy, interpolate, kind))
    out = (result_frequency(to, series, [d for d in deflators if d.kind == "index"],
                            fy_start=fy) if not isinstance(to, Frequency) else to)
    return ServeCheck(series.name, span.label, out or series.frequency, tuple(fits),
                      interpolate)


def trim_to_cover(series: Series, deflators: Sequence[Series]) -> tuple[Series, str | None]:
    """Cut ``series`` to the periods every deflator covers (first to last value), so
    deflators of different lengths can be compared; only the ends are cut. Returns the
    series and a note for the method (None when nothing was cut). DF040 when no period
    is left."""
    spans = [m for m in (_months(d) for d in deflators) if m is not None]
    if not spans or series.values.dropna().empty:
        return series, None
    first = max(a for a, _ in spans)
    last = min(b for _, b in spans)
    kept = _trim(series, first, last)
    if kept is None:
        raise fail(DF040, f"the chosen deflators together cover no period of "
                   f"{series.name!r}", expected="deflators whose values overlap the series",
                   found=f"common span {pd.Period(ordinal=first, freq='M')} to "
                         f"{pd.Period(ordinal=last, freq='M')}", series=series.name,
                   fix="Choose deflators that cover the series, or project the index.",
                   remedy="project_index")
    if kept is series:
        return series, None
    v = kept.values.dropna()
    f = series.frequency
    return kept, (f"{series.name} is shown from {f.label(v.index[0])} to "
                  f"{f.label(v.index[-1])}, the periods every chosen deflator covers.")


# --------------------------------------------------------------------------- comparing

MEASURES: Mapping[str, str] = {
    "yoy": "latest period on a year earlier",
    "cagr": "compound annual rate over the whole span",
    "pop": "latest period on the one before",
}


def measure_span(nominal: pd.Series, frequency: Frequency, measure: str) -> str:
    """The periods a measure compares, in words ('FY2030 on FY2029')."""
    idx = nominal.dropna().index
    if len(idx) < 2:
        return ""
    last, lab = idx[-1], frequency.label
    if measure == "cagr":
        return f"{lab(idx[0])} to {lab(last)}"
    if measure == "yoy" and frequency.periods_per_year > 1:
        return f"{lab(last)} on {lab(last - frequency.periods_per_year)}"
    return f"{lab(last)} on {lab(last - 1)}"


def measure_rate(values: pd.Series, frequency: Frequency, measure: str) -> float:
    """Growth of ``values`` by ``measure`` (yoy, cagr, pop) at its last period."""
    v = values.dropna()
    if len(v) < 2:
        return float("nan")
    last = v.index[-1]
    if measure == "cagr":
        return float(growth.cagr(v, v.index[0], last, frequency).value)
    if measure == "yoy" and frequency.periods_per_year > 1:
        g = growth.year_on_year(v, frequency)
    else:
        g = growth.period_on_period(v, frequency)
    return float(g.values.get(last, float("nan")))


@dataclass(frozen=True)
class SignVerdict:
    """The plain verdict on the sign of real growth across deflators."""

    text: str
    tone: Literal["ok", "warn", "error", "info"]
    positive: int
    negative: int
    zero: int

    @property
    def n(self) -> int:
        return self.positive + self.negative + self.zero


def sign_verdict(real_rates: Sequence[float], measure_words: str = "", span: str = ""
                 ) -> SignVerdict:
    """'Real growth is positive under all 4 deflators (…)' or 'The sign depends on the
    deflator: …'. NaN rates do not count."""
    usable = [float(r) for r in real_rates if _finite(r)]
    n = len(usable)
    pos = sum(1 for r in usable if r > 0)
    neg = sum(1 for r in usable if r < 0)
    zero = n - pos - neg
    what = f" ({measure_words}, {span})" if measure_words and span else ""
    if n == 0:
        return SignVerdict("Real growth cannot be computed for the chosen periods.", "warn",
                           0, 0, 0)
    word = "deflator" if n == 1 else "deflators"
    if pos == n:
        text = (f"Real growth is positive under all {n:,} {word}{what}." if n > 1 else
                f"Real growth is positive under the one deflator chosen{what}.")
        return SignVerdict(text, "ok", pos, neg, zero)
    if neg == n:
        text = (f"Real growth is negative under all {n:,} {word}{what}." if n > 1 else
                f"Real growth is negative under the one deflator chosen{what}.")
        return SignVerdict(text, "warn", pos, neg, zero)
    if pos + neg == 0:
        return SignVerdict(f"Real growth is zero under all {n:,} {word}{what}.", "info",
                           pos, neg, zero)
    return SignVerdict(f"The sign depends on the deflator: real growth is positive under "
                       f"{pos:,} and negative under {neg:,} of {n:,} {word}{what}.", "error",
                       pos, neg, zero)


def _finite(x: object) -> bool:
    try:
        return math.isfinite(float(x))  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return False


@dataclass(frozen=True, eq=False)
class Comparison:
    """One series under every deflator that can serve it.

    ``result``: the engine's deflation over the deflators kept (series cut to the periods
    all of them cover). ``rows``: per kept deflator, nominal, price and real growth by
    ``measure`` (fractions) and the worst status. ``verdict``: the sign verdict over the
    kept deflators. ``left_out``: the deflators that cannot serve, each with its reason
    (also as DF041 warnings). ``check``: the full serve check.
    """

    series: str
    result: DeflationResult
    rows: tuple[Mapping[str, object], ...]
    verdict: SignVerdict
    measure: str
    measure_words: str
    left_out: tuple[Fit, ...]
    check: ServeCheck
    cut: str | None = None
    warnings: tuple[Problem, ...] = field(default=())

    @property
    def deflators(self) -> tuple[str, ...]:
        return self.result.deflator_names

    @property
    def title(self) -> str:
        unit = self.result.units[0] if self.result.units else None
        return (f"{self.series} in {self.result.dollars_label} under "
                f"{len(self.deflators):,} deflator(s) ({unit or 'unit not stated'})")

    def left_out_text(self) -> str | None:
        """'Left out: A (reason); B (reason).' or None when every deflator served."""
        if not self.left_out:
            return None
        return "Left out: " + "; ".join(
            f"{f.deflator} ({VERDICT_WORDS[f.verdict]}: {f.reason})" if f.reason else
            f"{f.deflator} ({VERDICT_WORDS[f.verdict]})" for f in self.left_out) + "."

    def table(self) -> pd.DataFrame:
        return self.result.table()

    def growth_frame(self) -> pd.DataFrame:
        """``deflator, nominal, price, real, status`` (rates as fractions)."""
        return pd.DataFrame(list(self.rows), columns=["deflator", "nominal", "price", "real",
                                                      "status"])

    def method_note(self) -> tuple[str, ...]:
        lines = list(self.result.method_note())
        if self.cut:
            lines.append(self.cut)
        text = self.left_out_text()
        if text:
            lines.append(text + " The verdict is over the other deflators.")
        return tuple(lines)


def compare_deflators(series: Series, deflators: Sequence[Series], base: str | Span, *,
                      to: str | Frequency | None = "auto", fy_start: int | None = None,
                      interpolate: bool = False, measure: str = "yoy",
                      kind: Kind | None = None) -> Comparison:
    """``series`` deflated by every deflator that can serve it, growth per deflator and
    the verdict over those; the others are left out and named with their reasons
    (DF041 warnings). DF040 when none can serve (one problem per deflator, each with
    the remedy it needs). ``to`` as in :func:`result_frequency` (``auto`` over the kept
    deflators); ``measure``: ``yoy``, ``cagr`` or ``pop``."""
    if not deflators:
        raise fail(DF040, "no deflator chosen", expected="one or more price indexes",
                   found="none", fix="Choose the deflators to compare.",
                   remedy="deflator_missing")
    check = serve_check(series, deflators, base, to=to, fy_start=fy_start,
                        interpolate=interpolate, kind=kind)
    kept = [d for d in deflators if check.fit(d.name).usable]
    if not kept:
        raise RealbasisError([dataclasses_replace(
            f.as_problem(series.name), code=DF040, severity="error",
            message=f"{f.deflator!r} cannot serve {series.name!r}") for f in check.left_out])
    fy = _fy_of(series, fy_start, to if isinstance(to, Frequency) else None)
    out = result_frequency(to, series, kept, fy_start=fy) if not isinstance(
        to, Frequency) else to
    s, cut = trim_to_cover(series, kept)
    res = deflate([s], kept, parse_span(base, fy), to=out, fy_start=fy, interpolate=interpolate, kind=kind)
    f = res.frequency
    nominal = res.nominal_series(s.name)
    table = res.table()
    rows = []
    for name in res.deflator_names:
        real = res.real_series(s.name, name)
        price = 100.0 * nominal / real
        rates = {k: measure_rate(v, f, measure)
                 for k, v in (("nominal", nominal), ("price", price), ("real", real))}
        st = table.loc[table["deflator"] == name, "status"]
        worst = max(st, key=lambda x: STATUS_RANK.get(x, 0)) if len(st) else "final"
        rows.append({"deflator": name, **rates, "status": str(worst)})
    span = measure_span(nominal, f, measure)
    words = MEASURES.get(measure, measure)
    verdict = sign_verdict([float(r["real"]) for r in rows], words, span)  # type: ignore[arg-type]
    left = check.left_out
    warnings = (*res.warnings, *(x.as_problem(series.name) for x in left))
    return Comparison(series.name, res, tuple(rows), verdict, measure,
                      f"{words} ({span})", left, check, cut, warnings)


def dataclasses_replace(p: Problem, **changes: object) -> Problem:
    import dataclasses

    return dataclasses.replace(p, **changes)  # type: ignore[arg-type]
