"""The workspace's fiscal year, and period fields read with it.

A workspace has one fiscal-year start month. It is taken from the workspace's fiscal
series (fiscal-year or fiscal-quarter periods, money series and indexes alike) when they
agree, or set by the user and saved in ``Workspace.settings["fy_start"]``, which then wins.
The month is never assumed: with no fiscal series and no setting, labels that need it
(``FY2025``, ``2024-25``, ``FY2025Q1``) are refused with PE102, whose remedy asks for it.

Every period a user types — a base, a new base for rebasing, the end of a projection, the
overlap of two index segments, a span — is read by :func:`read_period` with that month:
one label or a range ``START..END`` of labels in any style :mod:`pipeline.labels`
accepts (through :func:`pipeline.periods.parse_span`; there is no second label reader),
and, given the frequency of the series or index it is used with, checked to be made of
whole periods of it. Fiscal years are named by the calendar year they end in (US federal
fiscal year, 31 U.S.C. 1102; UK financial year, HM Treasury *Managing Public Money*):
with a July start FY2025 and 2024-25 are both July 2024 to June 2025.
"""

from __future__ import annotations

import calendar
import dataclasses
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Literal

import pandas as pd

from .errors import Problem, RealbasisError, fail, register, warn
from .labels import _check_fy_start
from .model import Frequency, Series, Workspace
from .periods import PE202, Span, parse_span

PE301 = register("PE301", "fiscal series disagree on the fiscal-year start")
PE302 = register("PE302", "period does not fit the frequency it is used with")

SETTING = "fy_start"
"""Key of the saved fiscal-year start month in ``Workspace.settings``."""

Source = Literal["setting", "series", "none", "disagree"]
Use = Literal["base", "rebase", "until", "overlap", "span"]
USE_WORDS: Mapping[str, str] = {
    "base": "base period",
    "rebase": "new base period",
    "until": "end of the projection",
    "overlap": "overlap period",
    "span": "span",
}


def month_name(month: int) -> str:
    return calendar.month_name[int(month)]


def example(month: int) -> str:
    """'FY2025 = July 2024 to June 2025' for a July start (January: the calendar year)."""
    start = pd.Period(year=2025 if month == 1 else 2024, month=month, freq="M")
    end = start + 11
    return f"FY2025 = {start.strftime('%B %Y')} to {end.strftime('%B %Y')}"


@dataclass(frozen=True)
class FiscalYear:
    """A workspace's fiscal-year start month and where it came from.

    ``month``: 1-12, or None when unknown (no setting and no fiscal series, or fiscal
    series that disagree). ``source``: ``setting`` (chosen by the user and saved),
    ``series`` (all fiscal series agree), ``none`` or ``disagree``. ``found``: start
    month -> names of the fiscal series with that start. ``warnings``: PE301 when series
    disagree (with each other, or with the setting).
    """

    month: int | None
    source: Source
    found: Mapping[int, tuple[str, ...]] = dataclasses.field(default_factory=dict)
    warnings: tuple[Problem, ...] = ()

    @property
    def known(self) -> bool:
        return self.month is not None

    def frequency(self) -> Frequency | None:
        """Fiscal years of this start month (None while unknown)."""
        return Frequency("FY", self.month) if self.month is not None else None

    def describe(self) -> str:
        """One sentence for the method note and the intake screen."""
        n = sum(len(v) for v in self.found.values())
        if self.month is not None:
            head = (f"Fiscal years start in {month_name(self.month)} "
                    f"({example(self.month)}; named by the year they end in)")
            if self.source == "setting":
                return head + ", as set for this workspace."
            return head + f", taken from the workspace's {n:,} fiscal series."
        if self.source == "disagree":
            parts = "; ".join(f"{_names(v)} start in {month_name(m)}"
                              for m, v in sorted(self.found.items()))
            return f"The fiscal series disagree on the fiscal year ({parts}); none is assumed."
        return ("No fiscal year is set and no series is fiscal; fiscal-year labels such as "
                "FY2025 need the month the fiscal year starts in.")

    def method_note(self) -> tuple[str, ...]:
        return (self.describe(),)


def _names(names: Iterable[str], limit: int = 3) -> str:
    names = list(names)
    head = ", ".join(repr(n) for n in names[:limit])
    return head + (f" and {len(names) - limit:,} more" if len(names) > limit else "")


def _fiscal_starts(series: Iterable[Series]) -> dict[int, tuple[str, ...]]:
    found: dict[int, list[str]] = {}
    for s in series:
        if s.frequency.is_fiscal:
            names = found.setdefault(s.frequency.fy_start, [])
            if s.name not in names:
                names.append(s.name)
    return {m: tuple(v) for m, v in sorted(found.items())}


def infer_fiscal_start(series: Iterable[Series], setting: int | None = None) -> FiscalYear:
    """The fiscal-year start month from fiscal series (and an optional saved setting).

    A ``setting`` (1-12) wins; a series that disagrees with it gives a PE301 warning.
    Without one, the fiscal series decide when they all agree; when they disagree the
    month stays unknown and PE301 asks for it. Monthly, quarterly and calendar-year
    series say nothing about the fiscal year.
    """
    if setting is not None:
        setting = _check_fy_start(setting)
    found = _fiscal_starts(series)
    if setting is not None:
        other = {m: v for m, v in found.items() if m != setting}
        warnings: tuple[Problem, ...] = ()
        if other:
            who = "; ".join(f"{_names(v)} start in {month_name(m)}"
                            for m, v in other.items())
            warnings = (warn(PE301, "some fiscal series start their year in another month "
                             "than the workspace's fiscal year",
                             expected=f"fiscal years starting {month_name(setting)}",
                             found=who,
                             fix="Check that those series are read with the right fiscal "
                                 "start month; figures by fiscal year use the workspace's.",
                             remedy="fiscal_start"),)
        return FiscalYear(setting, "setting", found, warnings)
    if not found:
        return FiscalYear(None, "none", found)
    if len(found) == 1:
        return FiscalYear(next(iter(found)), "series", found)
    who = "; ".join(f"{_names(v)} start in {month_name(m)}" for m, v in found.items())
    return FiscalYear(None, "disagree", found, (warn(
        PE301, "the fiscal series do not agree on the month the fiscal year starts in",
        expected="one fiscal-year start month for the workspace", found=who,
        fix="Say which month the workspace's fiscal year starts in.",
        remedy="fiscal_start"),))


def _all_series(ws: Workspace) -> list[Series]:
    out = list(ws.series.values())
    for vintages in ws.indexes.values():
        out.extend(vintages.values())
    return out


def workspace_fiscal_year(ws: Workspace) -> FiscalYear:
    """The workspace's fiscal year: its saved setting, else what its fiscal series say."""
    raw = (ws.settings or {}).get(SETTING)
    setting = None if raw in (None, "") else raw
    if isinstance(setting, str) and setting.strip().isdigit():
        setting = int(setting)
    return infer_fiscal_start(_all_series(ws), setting)  # type: ignore[arg-type]


def fiscal_start_of(ws: Workspace) -> int | None:
    """Shorthand: the workspace's fiscal start month, or None while unknown."""
    return workspace_fiscal_year(ws).month


def with_fiscal_start(ws: Workspace, month: int | None) -> Workspace:
    """A copy of ``ws`` whose saved fiscal-year start month is ``month`` (None clears the
    setting, so the fiscal series decide again). PE104 for a month outside 1-12."""
    settings = dict(ws.settings or {})
    if month is None:
        settings.pop(SETTING, None)
    else:
        settings[SETTING] = _check_fy_start(month)
    return dataclasses.replace(ws, settings=settings)


# --------------------------------------------------------------------------- period fields


def examples(fy_start: int | None) -> str:
    """Examples of what a period field takes, with fiscal ones once the month is known."""
    if fy_start is not None and fy_start != 1:
        return "FY2025, 2024-25, FY2025Q1, 2024Q1, 2024-01, 2024 or a range FY2025..FY2027"
    if fy_start == 1:
        return "FY2025, 2024Q1, 2024-01, 2024 or a range 2024-01..2024-12"
    return "2024, 2024Q1, 2024-01 or a range 2024-01..2024-12"


def _a(words: str) -> str:
    return ("an " if words[:1] in "aeiou" else "a ") + words


def read_period(text: str | Span | pd.Period | None, fy_start: int | None = None, *,
                frequency: Frequency | None = None, use: Use = "base") -> Span:
    """Read a period field: one label or ``START..END`` (any label style the intake
    reads; fiscal ones with ``fy_start``, else the fiscal start of ``frequency``).

    With ``frequency`` (the series or index the period is used with) a base, new base,
    overlap or span must be made of whole periods of it (PE203 for a base, PE302 for an
    overlap or span); the end of a projection needs no such fit (the projection stops
    at the last whole period). Errors: PE202 empty or malformed, PE101 not a period,
    PE102 fiscal label without a start month, PE104/PE105 bad start month.
    """
    what = USE_WORDS.get(use, use)
    if isinstance(text, Span | pd.Period):
        span = parse_span(text)
    else:
        raw = "" if text is None else str(text).strip()
        if not raw:
            raise fail(PE202, f"no {what} given", expected=examples(fy_start), found="(empty)",
                       fix=f"Give the {what}.")
        fy = _check_fy_start(fy_start)
        hint: Frequency | int | None = fy if fy is not None else frequency
        try:
            span = parse_span(raw, hint)
        except RealbasisError as err:
            if err.code != PE202:
                raise
            p = err.problems[0]
            raise RealbasisError(dataclasses.replace(
                p, message=p.message.replace("base", what, 1),
                expected=examples(fy_start))) from None
    if frequency is None or use == "until":
        return span
    try:
        span.periods_in(frequency)
    except RealbasisError as err:
        if use in ("base", "rebase"):
            raise
        raise fail(PE302, f"the {what} {span.label} is not made of whole periods of the "
                   f"index ({frequency.describe()})",
                   expected=f"{_a(what)} made of whole periods ({frequency.describe()})",
                   found=span.describe(), period=span.label,
                   fix=f"Choose {_a(what)} that starts and ends on period boundaries of the "
                       "index.") from err
    return span


__all__ = ["SETTING", "FiscalYear", "examples", "fiscal_start_of", "infer_fiscal_start",
           "read_period", "with_fiscal_start", "workspace_fiscal_year"]
