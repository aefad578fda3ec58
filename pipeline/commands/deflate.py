"""``realbasis deflate``: money series into constant dollars of a base period.

    realbasis deflate SERIES_FILE --index INDEX_FILE [--index INDEX_FILE ...] --base PERIOD
                      [--to M|Q|A|FY] [--fiscal-start 1-12] [--kind flow|stock] [--out PATH]
                      [--sa none|stl|stl-robust|x13|classical] [--sa-order deflate-first|adjust-first]
                      [--sa-model auto|multiplicative|additive] [--sa-interpolate]
                      [--interpolate [denton|linear]] [--interpolate-indicator INDEX_FILE]

Every money (flow or stock) series of SERIES_FILE is deflated by every index column of
every --index file. ``--out`` ending in .csv, .json or .xlsx writes that file; without it
the table is printed to stdout as CSV (same columns), and the method note, cautions and
warnings go to stderr as ``#`` lines. Exit 0 on success, 2 on bad input (coded message on
stderr, no traceback).

The command is built in steps other parts extend without touching the rest:
``add_arguments`` (the parser), ``load_inputs`` (files to Series), ``prepare_series``
(hook applied to the money series before deflation, e.g. seasonal adjustment),
``compute`` (the engine call) and ``emit`` (output).
"""

from __future__ import annotations

import argparse
import sys
from collections import Counter
from dataclasses import dataclass
from pathlib import Path

from pipeline.commands._remedies import CLI
from pipeline.deflate import DeflationResult, deflate
from pipeline.errors import Problem, fail
from pipeline.errors import register as register_code
from pipeline.export import export_table, neutralise_frame, write_result
from pipeline.model import ANNUAL, CAUTIONS, MONTHLY, Frequency, Series

CL251 = register_code("CL251", "no money series in the series file")
CL252 = register_code("CL252", "no index column in an index file")
CL253 = register_code("CL253", "fiscal start month needed for --to FY")
CL260 = register_code("CL260", "an interpolation indicator needs Denton interpolation")

TO_CHOICES = ("M", "Q", "A", "FY")


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("series_file", metavar="SERIES_FILE",
                   help="CSV, XLSX or SDMX-CSV file with the nominal money series")
    p.add_argument("--index", dest="index_files", metavar="INDEX_FILE", action="append",
                   required=True,
                   help="file of price indexes; every index column is a deflator (repeatable)")
    p.add_argument("--base", required=True, metavar="PERIOD",
                   help="base period: FY2025, 2024Q1, 2024-01, 2024, or a range 2024-01..2024-12")
    p.add_argument("--to", choices=TO_CHOICES, default=None,
                   help="frequency of the results (default: the series' own)")
    p.add_argument("--fiscal-start", dest="fiscal_start", type=int, metavar="1-12",
                   choices=range(1, 13), default=None,
                   help="month the fiscal year starts in (7 = July; FY2025 = July 2024-June 2025)")
    p.add_argument("--kind", choices=("flow", "stock"), default=None,
                   help="treat every series as a flow (summed) or a stock (last value)")
    p.add_argument("--out", metavar="PATH", default=None,
                   help="write .csv, .json or .xlsx; default: print the table (CSV) to stdout")
    add_sa_arguments(p)
    add_interpolation_arguments(p)


def add_interpolation_arguments(p: argparse.ArgumentParser, *, indicator: bool = True) -> None:
    """``--interpolate [denton|linear]`` (and ``--interpolate-indicator``): allow a deflator
    less frequent than the series (pipeline.benchmark). Without it such a deflator is
    refused (PE204), so interpolation never happens unasked."""
    from pipeline.benchmark import DEFAULT_METHOD, METHODS

    p.add_argument("--interpolate", nargs="?", const=DEFAULT_METHOD, choices=METHODS,
                   default=None, metavar="denton|linear",
                   help="interpolate a deflator less frequent than the series to the series' "
                   "periods: denton (the default when the option is given alone) keeps each "
                   "published period's average, linear draws straight lines between "
                   "mid-period values; every value resting on an interpolated index value is "
                   "flagged (column interpolated). Without it such a deflator is refused")
    if indicator:
        p.add_argument("--interpolate-indicator", dest="interpolate_indicator",
                       metavar="INDEX_FILE", default=None,
                       help="a more frequent price index whose movement guides the Denton "
                       "interpolation (default: none, the smoothest path)")


def interpolation_options(args: argparse.Namespace) -> dict[str, object]:
    """The engine's ``interpolate`` (and ``indicators``) arguments from the options."""
    method = getattr(args, "interpolate", None)
    path = getattr(args, "interpolate_indicator", None)
    options: dict[str, object] = {"interpolate": method or False}
    if path is None:
        return options
    if method != "denton":
        raise fail(CL260, "--interpolate-indicator guides a Denton interpolation",
                   expected="--interpolate (or --interpolate denton) with it",
                   found=f"--interpolate {method}" if method else "no --interpolate",
                   fix="Add --interpolate, or leave out --interpolate-indicator.")
    from pipeline.ingest import read_file

    intake = read_file(path, fy_start=getattr(args, "fiscal_start", None)
                       or getattr(args, "fy_start", None))
    intake.raise_for_errors()
    found = [s for s in intake.series if s.kind == "index"]
    if len(found) != 1:
        kinds = ", ".join(f"{s.name!r} ({s.kind})" for s in intake.series) or "no series"
        raise fail(CL252, "the --interpolate-indicator file must hold one price index",
                   expected="one index column", found=kinds, file=str(path),
                   fix="Give a file with the one indicator index.")
    options["indicators"] = found[0]
    return options


def add_sa_arguments(p: argparse.ArgumentParser) -> None:
    """Seasonal adjustment options (pipeline.seasonal)."""
    from pipeline.seasonal import DEFAULT_ORDER, METHODS, MODELS, ORDERS

    p.add_argument("--sa", choices=("none", *METHODS), default="none",
                   help="seasonally adjust monthly or quarterly results; adds the columns "
                   "nominal_sa and real_sa (default: none)")
    p.add_argument("--sa-order", dest="sa_order", choices=ORDERS, default=DEFAULT_ORDER,
                   help="deflate-first (default: adjust the real series themselves) or "
                   "adjust-first (adjust the nominal, then deflate it)")
    p.add_argument("--sa-model", dest="sa_model", choices=MODELS, default="auto",
                   help="auto (multiplicative when every value is > 0, else additive), "
                   "multiplicative or additive")
    p.add_argument("--sa-interpolate", dest="sa_interpolate", action="store_true",
                   help="fill gaps inside a series to run the adjustment (flagged; the "
                   "adjusted values stay missing there) instead of refusing the series")


@dataclass(frozen=True)
class Inputs:
    series: tuple[Series, ...]
    deflators: tuple[Series, ...]
    warnings: tuple[Problem, ...]
    files: tuple[str, ...]


def load_inputs(args: argparse.Namespace) -> Inputs:
    """Read the series file and every index file with the intake (all errors at once)."""
    from pipeline.ingest import read_file

    fy = args.fiscal_start
    warnings: list[Problem] = []
    intake = read_file(args.series_file, fy_start=fy)
    intake.raise_for_errors()
    warnings.extend(intake.warnings)
    # --kind says what the money series are; without it the intake's kinds decide
    money = list(intake.series) if args.kind else [s for s in intake.series
                                                  if s.kind != "index"]
    if not money:
        found = ", ".join(f"{s.name!r} ({s.kind})" for s in intake.series) or "no series"
        raise fail(CL251, "the series file holds no money series to deflate",
                   expected="at least one flow or stock series", found=found,
                   file=str(args.series_file),
                   fix="Give the file of nominal amounts first; if its columns were taken for "
                   "indexes, say what they are with --kind flow or --kind stock.")
    deflators: list[Series] = []
    for path in args.index_files:
        idx = read_file(path, fy_start=fy)
        idx.raise_for_errors()
        warnings.extend(idx.warnings)
        found = [s for s in idx.series if s.kind == "index"]
        if not found:
            kinds = ", ".join(f"{s.name!r} ({s.kind})" for s in idx.series) or "no series"
            raise fail(CL252, "no price index found in an --index file",
                       expected="one or more index columns", found=kinds, file=str(path),
                       fix="Check the file, or mark the columns as indexes (long layout: "
                       "a unit such as 'index 2015=100').")
        stem = Path(path).stem
        deflators.extend((s, stem) for s in found)  # type: ignore[misc]
    # the same index name from two files: qualify it with the file name
    counts = Counter(s.name for s, _ in deflators)  # type: ignore[misc]
    named = tuple(s if counts[s.name] == 1 else s.with_values(s.values, name=f"{stem}: {s.name}")
                  for s, stem in deflators)  # type: ignore[misc]
    return Inputs(tuple(money), named, tuple(warnings),
                  (str(args.series_file), *map(str, args.index_files)))


def prepare_series(args: argparse.Namespace, series: tuple[Series, ...]) -> tuple[Series, ...]:
    """Hook on the money series before deflation (no change in this version)."""
    return series


def target_frequency(args: argparse.Namespace, inputs: Inputs) -> Frequency | None:
    if args.to is None:
        return None
    fy = args.fiscal_start
    if args.to == "M":
        return MONTHLY
    if args.to == "A":
        return ANNUAL
    if args.to == "Q":
        return Frequency("Q", fy or 1)
    if fy is None:
        starts = {s.frequency.fy_start for s in (*inputs.series, *inputs.deflators)
                  if s.frequency.is_fiscal}
        if len(starts) == 1:
            return Frequency("FY", starts.pop())
        raise fail(CL253, "--to FY needs the month the fiscal year starts in",
                   expected="--fiscal-start 1-12 (e.g. 7 for July-June years)",
                   found="no --fiscal-start and no fiscal data to take it from",
                   fix="Add --fiscal-start.")
    return Frequency("FY", fy)


def compute(args: argparse.Namespace, inputs: Inputs) -> DeflationResult:
    series = prepare_series(args, inputs.series)
    return deflate(series, inputs.deflators, args.base, to=target_frequency(args, inputs),
                   kind=args.kind, fy_start=args.fiscal_start, **interpolation_options(args))


def emit(args: argparse.Namespace, inputs: Inputs, result: DeflationResult) -> None:
    for p in (*inputs.warnings, *result.warnings):
        sys.stderr.write("warning: " + p.render(CLI).replace("\n", "\n  ") + "\n")
    if args.out:
        path = write_result(result, args.out, command="realbasis deflate",
                            files="; ".join(inputs.files), base=result.base_label)
        rows = len(result.series_names) * len(result.deflator_names)
        sys.stderr.write(f"wrote {path} ({result.dollars_label}; {rows} series x deflator "
                         f"pairs, {result.frequency.describe()})\n")
        return
    neutralise_frame(export_table(result)).to_csv(sys.stdout, index=False,
                                                   lineterminator="\r\n")
    sys.stdout.flush()
    for line in result.method_note():
        sys.stderr.write(f"# {line}\n")
    for line in CAUTIONS:
        sys.stderr.write(f"# caution: {line}\n")


def seasonally_adjust(args: argparse.Namespace, result: DeflationResult) -> DeflationResult:
    """With --sa: the result seen with nominal_sa and real_sa (progress on stderr)."""
    if getattr(args, "sa", "none") == "none":
        return result
    from pipeline.seasonal import adjust_deflation

    shown = [-1]

    def progress(done: int, total: int) -> None:
        step = done * 20 // max(total, 1)  # at most about 20 lines
        if step != shown[0] or done == total:
            shown[0] = step
            sys.stderr.write(f"seasonal adjustment ({args.sa}): {done}/{total} series\n")

    adjusted = adjust_deflation(result, args.sa, order=args.sa_order, model=args.sa_model,
                                interpolate=args.sa_interpolate, progress=progress)
    return adjusted.as_result()  # type: ignore[return-value]


def run(args: argparse.Namespace) -> int:
    inputs = load_inputs(args)
    result = seasonally_adjust(args, compute(args, inputs))
    emit(args, inputs, result)
    return 0


def register(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("deflate", help="deflate money series into constant dollars of a base "
                       "period", description=__doc__.split("\n\n")[0])
    add_arguments(p)
    p.set_defaults(func=run)
    return p
