"""``realbasis check FILE``: say what intake finds in a file, and every problem.

Exit status: 0 when the file has no error problems (warnings allowed); 2 when it has
errors, whether structural (printed on stderr by the dispatcher, nothing read) or cell
errors (listed on stdout after the series that could be read).
"""

from __future__ import annotations

import argparse
from collections.abc import Sequence

import numpy as np

from pipeline.commands._intake import add_reading_arguments, parse_kinds, parse_markers
from pipeline.commands._remedies import CLI
from pipeline.ingest import Intake, read_file
from pipeline.model import Series


def _kinds(items: Sequence[str] | None) -> dict[str, str]:
    return parse_kinds(items)


def series_row(s: Series) -> dict[str, str]:
    """One series as the words `check` (and the intake screen) show."""
    v = s.values
    have = np.isfinite(v.to_numpy(dtype=float))
    labels = s.frequency.labels(s.index) if len(s.index) else []
    st = s.stretches()
    status = "; ".join(f"{k} {a}..{b}" for k, (a, b) in ((k, r) for k, r in st.items() if r)) or "final"
    return {
        "series": s.name + (f" [vintage {s.vintage}]" if s.vintage else ""),
        "frequency": s.frequency.describe(),
        "kind": s.kind,
        "unit": s.unit or "-",
        "first": labels[0] if labels else "-",
        "last": labels[-1] if labels else "-",
        "count": str(int(have.sum())),
        "missing": str(int((~have).sum())),
        "status": status,
    }


def render(intake: Intake) -> str:
    """The full text report of one intake."""
    how = [intake.format.upper()]
    if intake.format == "csv":
        how += [f"{intake.delimiter}-separated", intake.encoding or "", f"decimal {'comma' if intake.decimal == ',' else 'point'}"]
    else:
        how += [f"sheet {intake.sheet!r} of " + ", ".join(repr(x) for x in intake.sheets)]
    lines = [f"File: {intake.file} ({', '.join(h for h in how if h)})",
             f"Layout: {intake.layout}; {intake.rows} data rows; {len(intake.series)} series", ""]
    rows = [series_row(s) for s in intake.series]
    cols = ["series", "frequency", "kind", "unit", "first", "last", "count", "missing", "status"]
    if rows:
        width = {c: max(len(c), *(len(r[c]) for r in rows)) for c in cols}
        lines.append("  ".join(c.ljust(width[c]) for c in cols).rstrip())
        for r in rows:
            lines.append("  ".join(r[c].ljust(width[c]) for c in cols).rstrip())
        notes = [(s.name, n) for s in intake.series for n in s.notes if "guessed" in n or "assumed" in n]
        if notes:
            lines += ["", "Kinds were guessed; override with --kind NAME=flow|stock|index:"]
            lines += [f"  {name}: {n}" for name, n in notes[:50]]
            if len(notes) > 50:
                lines.append(f"  ... and {len(notes) - 50:,} more series guessed")
    else:
        lines.append("No series could be read.")
    if intake.note:
        lines += ["", "Reading note:"] + [f"  {n}" for n in intake.note]
    errors, warnings = intake.errors, intake.warnings
    n_err, n_warn = intake.totals()
    listed = ("" if (n_err, n_warn) == (len(errors), len(warnings))
              else f" ({len(errors) + len(warnings):,} listed; counts by code: "
              + ", ".join(f"{c} {n:,}" for c, n in intake.problem_counts.items()) + ")")
    lines += ["", f"Problems: {n_err:,} error(s), {n_warn:,} warning(s){listed}"]
    for p in errors:
        lines.append("error " + p.render(CLI))
    for p in warnings:
        lines.append("warning " + p.render(CLI))
    return "\n".join(lines)


def _run(args: argparse.Namespace) -> int:
    intake = read_file(args.file, sheet=args.sheet, fy_start=args.fiscal_start,
                       kinds=_kinds(args.kind), markers=parse_markers(args.marker),
                       daily=args.daily)  # type: ignore[arg-type]
    print(render(intake))
    return 2 if intake.errors else 0


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser(
        "check", help="show the series found in a file and every problem",
        description="Read FILE (CSV, XLSX, XLS, ODS or SDMX-CSV) as intake would and print each series "
                    "found (frequency, kind, unit, first/last period, count, missing, status "
                    "stretches) and every problem. Exit 0 when there are no errors (warnings "
                    "allowed), 2 when there are errors.")
    p.add_argument("file", metavar="FILE", help="CSV, XLSX or SDMX-CSV file")
    p.add_argument("--fiscal-start", type=int, choices=range(1, 13), metavar="1-12",
                   help="month the fiscal year starts in (needed for FY2025 or 2024-25 labels)")
    p.add_argument("--sheet", metavar="NAME", help="workbook sheet (default: the first with data)")
    add_reading_arguments(p)
    p.set_defaults(func=_run)
