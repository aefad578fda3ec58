"""The reading note: what intake did with a file, in words, built stage by stage.

Each stage adds its lines (how the bytes were decoded or which sheet was read, the rows
skipped above and below the table, the layout and the period columns, the decimal mark
and status markers, missing values, how the kinds were decided, dates aggregated). The
note travels in ``Intake.note``; the command line prints it and the intake screen can
show it as is."""

from __future__ import annotations

from collections.abc import Mapping, Sequence


class Note:
    """Lines of the reading note, in the order the stages add them."""

    def __init__(self, lines: Sequence[str | None] = ()) -> None:
        self.lines: list[str] = [line for line in lines if line]

    def add(self, line: str | None) -> None:
        if line:
            self.lines.append(line)

    def text(self) -> tuple[str, ...]:
        return tuple(self.lines)


def reading(fmt: str, encoding: str | None, delimiter: str | None) -> str | None:
    if fmt != "csv":
        return None
    return f"Read as text: encoding {encoding}, {delimiter}-separated."


def layout(layout: str, transposed: bool, period: str | None, n_series: int) -> str:
    if layout == "sdmx":
        return "Layout: SDMX-CSV (one row per observation; a series per key)."
    if layout == "long":
        return f"Layout: long (one row per value; period column {period!r})."
    if transposed:
        return "Layout: wide, periods across the header row (one row per series)."
    return f"Layout: wide (period column {period!r}; {n_series:,} series column(s))."


def decimal(mark: str) -> str:
    return "Decimal mark: " + ("comma (1.234,5)." if mark == "," else "point (1,234.5).")


def markers(counts: Mapping[str, int], meaning: Mapping[str, str]) -> str | None:
    if not counts:
        return None
    parts = [f"{k} ({meaning.get(k, 'no known meaning')}) {n:,}" for k, n in sorted(counts.items())]
    return "Status markers beside values: " + ", ".join(parts) + "."


def missing(cells: int, outside: int) -> str | None:
    out = []
    if cells:
        out.append(f"{cells:,} value(s) missing inside a series (blank, n/a, -, ..): each is "
                   "listed as a warning and stays an empty period, never bridged")
    if outside:
        out.append(f"{outside:,} blank cell(s) before a series' first value or after its last "
                   "are not part of it")
    return ("; ".join(out) + ".") if out else None


def kinds(how: Mapping[str, int]) -> str | None:
    if not how:
        return None
    words = {"given": "given", "from the unit": "from the unit",
             "from the file's role": "from the file's role", "guessed": "guessed (a guess: check it)"}
    return "Kinds: " + ", ".join(f"{n:,} {words.get(k, k)}" for k, n in how.items()) + "."


def daily(rows: int, days: tuple[int, int]) -> str | None:
    if not rows:
        return None
    lo, hi = days
    return (f"Dates finer than months aggregated to months ({rows:,} dated rows; {lo}–{hi} "
            "dates a month): flows summed, stocks at the month's last date, indexes averaged.")
