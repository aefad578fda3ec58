"""Core value types shared by every part of the engine.

A money series or price index is a :class:`Series`: float values on a pandas
``PeriodIndex`` of one frequency, with a kind (flow, stock or index), a unit, and for
indexes a per-period status (final, preliminary, projected) and a vintage.

Frequencies are :class:`Frequency` objects. Fiscal years are labelled by the calendar
year in which they end (July 2024 to June 2025 is FY2025), which is exactly how pandas
labels annual periods anchored on the fiscal year's last month (``Y-JUN``); fiscal
quarters likewise use ``Q-JUN`` (FY2025Q1 = July to September 2024).
"""

from __future__ import annotations

import calendar
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Literal

import numpy as np
import pandas as pd

Kind = Literal["flow", "stock", "index"]
Status = Literal["final", "preliminary", "projected"]
KINDS: tuple[Kind, ...] = ("flow", "stock", "index")
STATUSES: tuple[Status, ...] = ("final", "preliminary", "projected")
# Order of severity when statuses combine: a figure resting on a projected value is
# projected; else on a preliminary one preliminary; else final.
STATUS_RANK: Mapping[str, int] = {"final": 0, "preliminary": 1, "projected": 2}

FreqCode = Literal["M", "Q", "A", "FY"]
_MONTH_ABBR = [m.upper() for m in calendar.month_abbr]  # ['', 'JAN', ...]


@dataclass(frozen=True, order=True)
class Frequency:
    """A period frequency.

    ``code`` is M (month), Q (quarter), A (calendar year) or FY (fiscal year).
    ``fy_start`` is the month (1-12) a fiscal year starts in. For ``Q`` a ``fy_start``
    other than 1 means fiscal quarters (quarter 1 starts in that month). For ``A`` it is
    always 1; ``FY`` with ``fy_start=1`` is the same periods as ``A`` but labelled FY.
    """

    code: FreqCode
    fy_start: int = 1

    def __post_init__(self) -> None:
        if self.code not in ("M", "Q", "A", "FY"):
            raise ValueError(f"unknown frequency code {self.code!r}")
        if not 1 <= int(self.fy_start) <= 12:
            raise ValueError(f"fiscal start month must be 1-12, got {self.fy_start!r}")
        if self.code in ("M", "A") and self.fy_start != 1:
            object.__setattr__(self, "fy_start", 1)

    @property
    def end_month_abbr(self) -> str:
        """Three-letter month in which the (fiscal) year ends, e.g. 'JUN' for July starts."""
        end = (self.fy_start - 2) % 12 + 1
        return _MONTH_ABBR[end]

    @property
    def pandas_freq(self) -> str:
        """The pandas Period frequency string for this frequency (pandas >= 2.2 aliases)."""
        if self.code == "M":
            return "M"
        if self.code == "Q":
            return f"Q-{self.end_month_abbr}"
        return f"Y-{self.end_month_abbr}"

    @property
    def periods_per_year(self) -> int:
        return {"M": 12, "Q": 4, "A": 1, "FY": 1}[self.code]

    @property
    def months_per_period(self) -> int:
        return 12 // self.periods_per_year

    @property
    def is_fiscal(self) -> bool:
        return self.code == "FY" or (self.code == "Q" and self.fy_start != 1)

    def label(self, period: pd.Period) -> str:
        """Canonical text label: 2024-01, 2024Q1, FY2025Q1, 2024, FY2025."""
        if self.code == "M":
            return f"{period.year:04d}-{period.month:02d}"
        if self.code == "Q":
            prefix = "FY" if self.fy_start != 1 else ""
            return f"{prefix}{period.qyear:04d}Q{period.quarter}"
        if self.code == "A":
            return f"{period.year:04d}"
        return f"FY{period.year:04d}"

    def labels(self, index: pd.PeriodIndex) -> list[str]:
        if self.code == "M":
            return [f"{y:04d}-{m:02d}" for y, m in zip(index.year, index.month, strict=True)]
        if self.code == "Q":
            prefix = "FY" if self.fy_start != 1 else ""
            return [f"{prefix}{y:04d}Q{q}" for y, q in zip(index.qyear, index.quarter, strict=True)]
        prefix = "FY" if self.code == "FY" else ""
        return [f"{prefix}{y:04d}" for y in index.year]

    def describe(self) -> str:
        """Words for people: 'monthly', 'quarterly', 'fiscal years starting July'."""
        if self.code == "M":
            return "monthly"
        if self.code == "Q":
            if self.fy_start == 1:
                return "quarterly"
            return f"fiscal quarters (year starting {calendar.month_name[self.fy_start]})"
        if self.code == "A":
            return "calendar years"
        return f"fiscal years starting {calendar.month_name[self.fy_start]}"

    def __str__(self) -> str:
        if self.code in ("M", "A") or (self.code == "Q" and self.fy_start == 1):
            return self.code
        return f"{self.code}-{self.fy_start:02d}"


MONTHLY = Frequency("M")
QUARTERLY = Frequency("Q")
ANNUAL = Frequency("A")


def fiscal_year(start_month: int) -> Frequency:
    return Frequency("FY", start_month)


@dataclass(frozen=True)
class Series:
    """One named series: money (flow or stock) or a price index.

    ``values``: float64 pandas Series on a sorted, unique PeriodIndex whose freq equals
    ``frequency.pandas_freq``. Missing values are NaN.
    ``status``: for indexes, a str Series on the same index with values from STATUSES;
    ``None`` means every value is final.
    ``vintage``: ISO date the index values were as of (None when unknown).
    ``reference``: the index reference period label (where the index = 100), if stated.
    """

    name: str
    values: pd.Series
    frequency: Frequency
    kind: Kind = "flow"
    unit: str | None = None
    status: pd.Series | None = None
    source: str | None = None
    vintage: str | None = None
    reference: str | None = None
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise ValueError(f"unknown kind {self.kind!r}")
        if not isinstance(self.values.index, pd.PeriodIndex):
            raise TypeError("Series.values must have a PeriodIndex")

    @property
    def index(self) -> pd.PeriodIndex:
        return self.values.index  # type: ignore[return-value]

    def status_or_final(self) -> pd.Series:
        """Per-period status, 'final' where none was given."""
        if self.status is None:
            return pd.Series("final", index=self.values.index, dtype=object)
        return self.status.reindex(self.values.index).fillna("final")

    def stretches(self) -> dict[str, tuple[str, str] | None]:
        """First and last period label of the preliminary and projected stretches."""
        st = self.status_or_final()
        out: dict[str, tuple[str, str] | None] = {}
        for s in ("preliminary", "projected"):
            idx = st.index[np.asarray(st == s)]
            out[s] = (self.frequency.label(idx[0]), self.frequency.label(idx[-1])) if len(idx) else None
        return out

    def to_long_frame(self) -> pd.DataFrame:
        """Long table (series, period, value, unit, status): the layout the intake reads
        back with the name, unit (or index reference) and statuses intact."""
        unit = self.unit or (f"index {self.reference}=100" if self.reference else "")
        return pd.DataFrame({"series": self.name, "period": self.frequency.labels(self.index),
                             "value": self.values.to_numpy(), "unit": unit,
                             "status": self.status_or_final().to_numpy(dtype=object)})

    def with_values(self, values: pd.Series, **changes: object) -> Series:
        """A copy with new values (and optionally other fields changed)."""
        fields = {**self.__dict__, "values": values, **changes}
        return Series(**fields)  # type: ignore[arg-type]


@dataclass(frozen=True)
class Workspace:
    """Everything one analyst's piece of work holds; what the store saves and loads.

    ``series``: nominal money series by name. ``indexes``: price indexes by name; an
    index may exist in several vintages, keyed ``name`` -> ``{vintage: Series}`` where the
    vintage key is the as-of date (ISO) or '' when unknown. ``settings``: JSON-safe
    choices (base period, chosen deflators, seasonal adjustment, ...). ``own_indexes``:
    JSON-safe recipes for indexes built in the workshop. ``notes``: free text.
    """

    id: str
    name: str
    version: int = 0
    series: Mapping[str, Series] = field(default_factory=dict)
    indexes: Mapping[str, Mapping[str, Series]] = field(default_factory=dict)
    settings: Mapping[str, object] = field(default_factory=dict)
    own_indexes: Mapping[str, Mapping[str, object]] = field(default_factory=dict)
    notes: str = ""


CAUTIONS: tuple[str, ...] = (
    "Real-terms figures depend on the deflator chosen; another index gives other numbers.",
    "Preliminary index values will be revised, and figures resting on them will move.",
    "Projected index values are assumptions, not measurements.",
    "These are analytical estimates, not official statistics.",
    "Follow your organisation's reporting policy and the standards that apply to you.",
)
