"""Stage 5a, periods: the period cell of every value to a period, through
:mod:`pipeline.labels` (parsed over unique labels, so a million rows with a few thousand
distinct labels take a fraction of a second)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from .. import labels
from .codes import IN010
from .layout import Cells, Plan, WideCells
from .problems import Problems, cell_problems
from .table import Table


@dataclass(frozen=True)
class Periods:
    """The period of each cell of :class:`~pipeline.intake.layout.Cells` (internal)."""

    text: pd.Series  # stripped period text
    parsed: labels.ParsedColumn


def check_shared_column(t: Table, plan: Plan, fy_start: int | None) -> None:
    """A wide file's one period column, shared by every series, must hold one frequency
    (PE103 at once, naming the first row of each)."""
    if plan.layout != "wide" or plan.transposed:
        return
    p = plan.roles["period"]
    labels.parse_label_column(t.col(p), fy_start, file=t.file, column=t.header[p], rows=t.rows)


def read(cells: Cells, text: pd.Series, series: np.ndarray, fy_start: int | None,
         keep: np.ndarray, sink: Problems, *, file: str,
         sheet: str | None) -> tuple[Periods, np.ndarray]:
    """Parse every period cell; cells of ``keep`` whose period is no label get IN010 and
    leave ``keep`` (returned)."""
    column = str(cells.period_column[0]) if len(cells.period_column) else None
    parsed = labels.parse_values(text, fy_start,
                                 where={"file": file, "sheet": sheet, "column": column})
    bad = keep & (parsed.keys == "")
    cell_problems(sink, IN010, "the period is not a period label", bad, rows=cells.row,
                  columns=cells.period_column, series=series, found=text.to_numpy(dtype=object),
                  expected=labels.ACCEPTED,
                  fix="Write the period in an accepted form, e.g. 2024-01, 2024Q1, FY2025.",
                  file=file, sheet=sheet, per_row=cells.headers is not None)
    return Periods(text, parsed), keep & ~bad


def read_column(w: WideCells, text: pd.Series, fy_start: int | None, all_missing: np.ndarray,
                sink: Problems, *, file: str, sheet: str | None) -> tuple[Periods, np.ndarray]:
    """The period column of a wide table: (periods, rows whose period parsed). A row whose
    period is no label gets one IN010 (a blank period on a row without values is nothing)."""
    parsed = labels.parse_values(text, fy_start,
                                 where={"file": file, "sheet": sheet, "column": w.period_column})
    ok = parsed.keys != ""
    empty = (text == "").to_numpy() & all_missing
    cell_problems(sink, IN010, "the period is not a period label", ~ok & ~empty, rows=w.row,
                  columns=w.period_column, series=None, found=text.to_numpy(dtype=object),
                  expected=labels.ACCEPTED,
                  fix="Write the period in an accepted form, e.g. 2024-01, 2024Q1, FY2025.",
                  file=file, sheet=sheet, per_row=True)
    return Periods(text, parsed), ok
