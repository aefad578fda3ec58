"""The problem list of one intake: every problem counted, the first ones kept.

A file with 288,000 bad cells must not produce 288,000 messages (nor the memory they
take): stages build at most :attr:`Problems.limit` problems of each code and count the
rest; the intake keeps the first ``limit`` problems overall (errors first, then by file
row) and the count per code. Cells are echoed at most :data:`ECHO` characters long.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterable, Mapping

import numpy as np

from ..errors import Location, Problem

ECHO = 80  # most characters of a cell (or a column name) quoted in a problem


def clip(text: object, limit: int = ECHO) -> str:
    """``text`` as str, cut to ``limit`` characters with an ellipsis and the length."""
    s = str(text)
    if len(s) <= limit:
        return s
    return s[: limit - 1] + f"… ({len(s):,} characters)"


def echo(value: object, limit: int = ECHO) -> str:
    """A cell as quoted in ``found``: its repr, cut to ``limit`` characters."""
    s = str(value)
    if len(s) <= limit:
        return repr(s)
    return repr(s[: limit - 1]) + f"… ({len(s):,} characters)"


def _sort_key(p: Problem) -> tuple[int, int]:
    return (0 if p.severity == "error" else 1, p.where.row or 0)


class Problems:
    """Collects problems: at most ``limit`` kept per code, every one counted."""

    def __init__(self, limit: int | None = None) -> None:
        self.limit = limit
        self._kept: list[Problem] = []
        self._per_code: Counter[str] = Counter()  # kept per code
        self.counts: Counter[str] = Counter()  # all, per code

    def room(self, code: str) -> int | None:
        """How many more problems of ``code`` are worth building (None: no limit)."""
        if self.limit is None:
            return None
        return max(0, self.limit - self._per_code[code])

    def add(self, p: Problem, count: int = 1) -> None:
        """Keep ``p`` (if there is room for its code) and count it ``count`` times."""
        self.counts[p.code] += count
        if self.limit is None or self._per_code[p.code] < self.limit:
            self._kept.append(p)
            self._per_code[p.code] += 1

    def extend(self, problems: Iterable[Problem]) -> None:
        for p in problems:
            self.add(p)

    def counted(self, code: str, n: int) -> None:
        """Count ``n`` more problems of ``code`` that were not built."""
        self.counts[code] += n

    def has_errors(self) -> bool:
        return any(p.severity == "error" for p in self._kept)

    def result(self) -> tuple[tuple[Problem, ...], Mapping[str, int], int]:
        """(problems kept: errors first, then by row; count per code; number left out)."""
        kept = sorted(self._kept, key=_sort_key)
        if self.limit is not None:
            kept = kept[: self.limit]
        total = sum(self.counts.values())
        return tuple(kept), dict(sorted(self.counts.items())), total - len(kept)


def cell_problems(sink: Problems, code: str, message: str, mask: np.ndarray, *,
                  rows: np.ndarray, columns: np.ndarray | str | None,
                  series: np.ndarray | None, found: np.ndarray, expected: str, fix: str,
                  file: str, sheet: str | None, periods: np.ndarray | None = None,
                  severity: str = "error", per_row: bool = False, remedy_key: str = "") -> int:
    """Add one problem per cell in ``mask`` (or per file row with ``per_row``), building
    at most the room left for ``code``; returns how many there were in all.

    ``rows``, ``found`` (cell text), ``series``, ``periods`` and ``columns`` are arrays
    over the same cells as ``mask`` (``columns`` may be one name for all)."""
    pos = np.flatnonzero(mask)
    if not len(pos):
        return 0
    if per_row:
        _, first = np.unique(rows[pos], return_index=True)
        pos = pos[np.sort(first)]
    total = len(pos)
    room = sink.room(code)
    build = pos if room is None else pos[:room]
    for p in build.tolist():
        col = columns if isinstance(columns, str) or columns is None else columns[p]
        where = Location(file=file, sheet=sheet, row=int(rows[p]),
                         column=None if col is None else clip(col),
                         series=None if per_row or series is None else (clip(series[p]) or None),
                         period=None if periods is None else (str(periods[p]) or None))
        sink.add(Problem(code, message, expected, echo(found[p]), fix, where,
                         severity, remedy_key))  # type: ignore[arg-type]
    sink.counted(code, total - len(build))
    return total


def grid_problems(sink: Problems, code: str, message: str, mask: np.ndarray, *,
                  rows: np.ndarray, columns: list[str], series: list[str], found: np.ndarray,
                  periods: np.ndarray | None = None, **kw: object) -> int:
    """:func:`cell_problems` for a (rows x columns) ``mask`` over a wide table, in file
    order; the per-cell arrays are built only for the cells in the mask."""
    r, c = np.nonzero(mask)
    if not len(r):
        return 0
    return cell_problems(sink, code, message, np.ones(len(r), dtype=bool), rows=rows[r],
                         columns=np.asarray(columns, dtype=object)[c],
                         series=np.asarray(series, dtype=object)[c], found=found[r, c],
                         periods=None if periods is None else periods[r],
                         **kw)  # type: ignore[arg-type]

