"""``realbasis deflate``: money series into constant dollars of a base period.

    realbasis deflate SERIES_FILE [--sheet NAME] --index INDEX_FILE [--index-sheet NAME]
                      [--index INDEX_FILE [--index-sheet NAME] ...] --base PERIOD
                      [--to M|Q|A|FY] [--fiscal-start 1-12] [--kind flow|stock]
                      [--kind NAME=flow|stock|index ...] [--marker LETTER=STATUS ...]
                      [--daily-to-months] [--out PATH]
                      [--sa none|stl|stl-robust|x13|classical] [--sa-order deflate-first|adjust-first]
                      [--sa-model auto|multiplicative|additive] [--sa-interpolate]
                      [--outlay-rates [NAME=]R0,R1,...] [--budget-out PATH]
                      [--interpolate [denton|linear]] [--interpolate-indicator INDEX_FILE]

Every money (flow or stock) series of SERIES_FILE is deflated by every index column of
every --index file. Kinds come from the files' roles: SERIES_FILE's columns are money
(flows unless ``--kind stock`` or ``--kind NAME=stock``), the --index files' columns are
price indexes; a unit that says otherwise (``index 2015=100`` in the series file, ``USD``
in an index file) and ``--kind NAME=...`` decide over the role. Nothing is guessed. ``--out`` ending in .csv, .json or .xlsx writes that file; without it
the table is printed to stdout as CSV (same columns), and the method note, cautions and
warnings go to stderr as ``#`` lines. Exit 0 on success, 2 on bad input (coded message on
stderr, no traceback).

The command is built in steps other parts extend without touching the rest:
``add_arguments`` (the parser), ``load_inputs`` (files to Series), ``prepare_series``
(hook applied to the money series before deflation, e.g. seasonal adjustment),
``compute`` (the engine call) and ``emit`` (output). Budget options live in their own
steps: ``add_budget_arguments``, ``compute_authority`` (outlay-weighted authority) and
``emit_budget`` (the budget table).
"""

from __future__ import annotations

import argparse
import sys
from collections import Counter
from dataclasses import dataclass
from pathlib import Path

from pipeline.commands._intake import add_reading_arguments, parse_kinds, parse_markers
from pipeline.commands._remedies import CLI
from pipeline.deflate import DeflationResult, deflate
from pipeline.errors import CL001, Location, Problem, fail, warn
from pipeline.errors import register as register_code
from pipeline.export import export_table, neutralise_frame, write_result
from pipeline.model import ANNUAL, CAUTIONS, MONTHLY, Frequency, Series

CL251 = register_code("CL251", "no money series in the series file")
CL252 = register_code("CL252", "no index column in an index file")
CL253 = register_code("CL253", "fiscal start month needed for --to FY")
CL260 = register_code("CL260", "an interpolation indicator needs Denton interpolation")
CL257 = register_code("CL257", "series left out of the deflation by their kind")
CL255 = register_code("CL255", "--index-sheet without an --index before it")
CL256 = register_code("CL256", "kind given for a series in none of the files")


class _IndexFile(argparse.Action):
    """--index FILE: one more index file (its sheet: the --index-sheet after it)."""

    def __call__(self, parser, namespace, values, option_string=None):  # type: ignore[override]
        files = list(getattr(namespace, "index_files", None) or [])
        sheets = list(getattr(namespace, "index_sheets", None) or [])
        files.append(values)
        sheets.append(None)
        namespace.index_files, namespace.index_sheets = files, sheets


class _IndexSheet(argparse.Action):
    """--index-sheet NAME: the sheet of the --index workbook given just before (a misplaced
    one is refused when the inputs are read, CL255)."""

    def __call__(self, parser, namespace, values, option_string=None):  # type: ignore[override]
        sheets = list(getattr(namespace, "index_sheets", None) or [])
        if not sheets:
            namespace.sheet_error = f"--index-sheet {values} with no --index before it"
        elif sheets[-1] is not None:
            namespace.sheet_error = (f"two --index-sheet for {namespace.index_files[-1]}")
        else:
            sheets[-1] = values
        namespace.index_sheets = sheets


class _Kind(argparse.Action):
    """--kind flow|stock (every series) or --kind NAME=KIND (one series; repeatable)."""

    def __call__(self, parser, namespace, values, option_string=None):  # type: ignore[override]
        if "=" in values:
            kinds = dict(getattr(namespace, "kinds", None) or {})
            kinds.update(parse_kinds([values]))
            namespace.kinds = kinds
            return
        if values not in ("flow", "stock"):
            raise fail(CL001, "--kind takes flow, stock or NAME=flow|stock|index",
                       expected="--kind flow, --kind stock or --kind 'NAME=index'",
                       found=repr(values), fix="Write flow or stock for every series, or a "
                       "series name, '=', then its kind.")
        namespace.kind = values

TO_CHOICES = ("M", "Q", "A", "FY")


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("series_file", metavar="SERIES_FILE",
                   help="CSV, workbook (XLSX, XLS, ODS) or SDMX-CSV file with the nominal "
                        "money series (its columns are money: flows unless told stock)")
    p.add_argument("--sheet", metavar="NAME", default=None,
                   help="sheet of SERIES_FILE when it is a workbook (default: the first "
                        "holding a table)")
    p.add_argument("--index", dest="index_files", metavar="INDEX_FILE", action=_IndexFile,
                   required=True,
                   help="file of price indexes; every column is a deflator (repeatable)")
    p.add_argument("--index-sheet", dest="index_sheets", metavar="NAME", action=_IndexSheet,
                   help="sheet of the --index workbook given just before (default: the first "
                        "holding a table)")
    p.add_argument("--base", required=True, metavar="PERIOD",
                   help="base period: FY2025, 2024Q1, 2024-01, 2024, or a range 2024-01..2024-12")
    p.add_argument("--to", choices=TO_CHOICES, default=None,
                   help="frequency of the results (default: the series' own)")
    p.add_argument("--fiscal-start", dest="fiscal_start", type=int, metavar="1-12",
                   choices=range(1, 13), default=None,
                   help="month the fiscal year starts in (7 = July; FY2025 = July 2024-June 2025)")
    p.add_argument("--kind", action=_Kind, default=None, metavar="flow|stock|NAME=KIND",
                   help="flow or stock: every money series is a flow (summed) or a stock "
                        "(last value); NAME=flow|stock|index: one series' kind, in any of "
                        "the files (repeatable)")
    add_reading_arguments(p, kind=False)
    p.add_argument("--out", metavar="PATH", default=None,
                   help="write .csv, .json or .xlsx; default: print the table (CSV) to stdout")
    add_sa_arguments(p)
    add_interpolation_arguments(p)
    add_growth_arguments(p)
    add_budget_arguments(p)


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
    """Read the series file and every index file with the intake (all errors at once).

    Kinds come from each file's role, never from a guess: the series file holds money
    (``--kind flow|stock`` for all, flow by default), the index files hold price indexes;
    ``--kind NAME=KIND`` and a unit that says index or money decide over the role. A
    command built on this one (a total, a report) gets the same reading."""
    from pipeline.ingest import read_file

    if getattr(args, "sheet_error", None):
        raise fail(CL255, "each --index-sheet names the sheet of the --index file just before it",
                   expected="--index FILE --index-sheet NAME (at most one sheet per --index)",
                   found=args.sheet_error,
                   fix="Put --index-sheet right after its --index; give a file twice to use two "
                   "of its sheets.")
    fy = args.fiscal_start
    named = dict(getattr(args, "kinds", None) or {})
    markers = parse_markers(getattr(args, "marker", None))
    daily = bool(getattr(args, "daily", False))
    warnings: list[Problem] = []
    series_file = str(args.series_file)
    intake = read_file(args.series_file, sheet=getattr(args, "sheet", None), fy_start=fy,
                       kinds={k: v for k, v in named.items()},  # type: ignore[misc]
                       default_kind=args.kind or "flow", markers=markers, daily=daily)
    intake.raise_for_errors()
    # a kind named for a series of another file is no problem here: checked once below
    warnings.extend(p for p in intake.warnings if p.code != "IN022")
    seen = {s.name for s in intake.series}
    money = [s for s in intake.series if s.kind != "index"]
    left = [s for s in intake.series if s.kind == "index"]
    if left and money:
        warnings.append(warn(CL257, f"{len(left)} series of the series file are price indexes "
                             "and are not deflated", expected="money series in the series file",
                             found=", ".join(f"{s.name!r} ({s.notes[0]})" for s in left[:5]),
                             fix="Nothing to do if they are indexes; give them as --index files "
                             "to deflate by them, or say --kind NAME=flow if they are money.",
                             where=Location(file=series_file)))
    if not money:
        found = ", ".join(f"{s.name!r} ({s.notes[0] if s.notes else s.kind})"
                          for s in intake.series[:5]) or "no series"
        raise fail(CL251, "the series file holds no money series to deflate",
                   expected="at least one flow or stock series", found=found,
                   file=series_file,
                   fix="Give the file of nominal amounts first; if its columns were taken for "
                   "indexes, say what they are with --kind NAME=flow or --kind NAME=stock.")
    deflators: list[tuple[Series, str]] = []
    sheets = list(getattr(args, "index_sheets", None) or [None] * len(args.index_files))
    for path, sheet in zip(args.index_files, sheets, strict=True):
        idx = read_file(path, sheet=sheet, fy_start=fy, kinds=named,  # type: ignore[arg-type]
                        default_kind="index", markers=markers, daily=daily)
        idx.raise_for_errors()
        warnings.extend(p for p in idx.warnings if p.code != "IN022")
        seen |= {s.name for s in idx.series}
        found = [s for s in idx.series if s.kind == "index"]
        other = [s for s in idx.series if s.kind != "index"]
        if not found:
            kinds = ", ".join(f"{s.name!r} ({s.notes[0] if s.notes else s.kind})"
                              for s in idx.series[:5]) or "no series"
            raise fail(CL252, "no price index found in an --index file",
                       expected="one or more index columns", found=kinds, file=str(path),
                       fix="Check the file; a column whose unit is money is not an index, and "
                       "--kind NAME=index says a column is one.")
        if other:
            warnings.append(warn(CL257, f"{len(other)} series of an index file are not price "
                                 "indexes and are not used as deflators",
                                 expected="price indexes in an --index file",
                                 found=", ".join(f"{s.name!r} ({s.notes[0]})" for s in other[:5]),
                                 fix="Nothing to do if they are money; say --kind NAME=index "
                                 "if they are indexes.", where=Location(file=str(path))))
        stem = Path(path).stem
        deflators.extend((s, stem) for s in found)
    unknown = sorted(set(named) - seen)
    if unknown:
        warnings.append(warn(CL256, "--kind names series that none of the files holds",
                             expected="names of series in the files",
                             found=", ".join(repr(n) for n in unknown[:10]),
                             fix="Check the spelling of the series names after --kind."))
    # the same index name from two files: qualify it with the file name
    counts = Counter(s.name for s, _ in deflators)
    qualified = tuple(s if counts[s.name] == 1 else s.with_values(s.values, name=f"{stem}: {s.name}")
                      for s, stem in deflators)
    return Inputs(tuple(money), qualified, tuple(warnings),
                  (series_file, *map(str, args.index_files)))


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
    if getattr(args, "outlay_rates", None):
        return compute_authority(args, inputs, series)
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


def _growth_path(text: str) -> str:
    from pipeline.export import SUFFIXES

    if not text.lower().endswith(SUFFIXES):
        raise argparse.ArgumentTypeError(f"{text!r} must end in .csv, .json or .xlsx")
    return text


def add_growth_arguments(p: argparse.ArgumentParser) -> None:
    """``--growth-out``: the growth table (pipeline.growth.split_table)."""
    p.add_argument("--growth-out", dest="growth_out", metavar="PATH", type=_growth_path,
                   default=None,
                   help="also write growth rates (.csv, .json or .xlsx): series, deflator, "
                   "measure (period, annualised, yoy, cagr, cumulative), start, end, "
                   "nominal_pct, price_pct, real_pct; with --sa, of the adjusted values")


def _adjusted_arrays(result: DeflationResult) -> tuple[object, object] | None:
    """The seasonally adjusted nominal (T, S) and real (D, T, S) of an adjusted result."""
    adjusted = getattr(result, "_adjusted", None)
    if adjusted is None:
        return None
    import numpy as np
    import pandas as pd

    table = adjusted.table
    s_i = pd.Index(result.series_names).get_indexer(table["series"].astype(str))
    d_i = pd.Index(result.deflator_names).get_indexer(table["deflator"].astype(str))
    t_i = pd.Index(result.frequency.labels(result.periods)).get_indexer(
        table["period"].astype(str))
    nominal = np.full(np.shape(result.nominal), np.nan)
    real = np.full(np.shape(result.real), np.nan)
    nominal[t_i, s_i] = table["nominal_sa"].to_numpy(dtype=float)
    real[d_i, t_i, s_i] = table["real_sa"].to_numpy(dtype=float)
    return nominal, real


def write_growth(args: argparse.Namespace, inputs: Inputs, result: DeflationResult) -> None:
    """With --growth-out: nominal, price and real growth of every series x deflator."""
    path = getattr(args, "growth_out", None)
    if not path:
        return
    from pipeline.export import write_table
    from pipeline.growth import split_table

    arrays = _adjusted_arrays(result)
    growth = split_table(result, nominal=arrays[0] if arrays else None,  # type: ignore[arg-type]
                         real=arrays[1] if arrays else None,  # type: ignore[arg-type]
                         adjusted=arrays is not None)
    for p in growth.warnings:
        sys.stderr.write("warning: " + p.render(CLI).replace("\n", "\n  ") + "\n")
    write_table(growth.table, path, title=f"Growth in {result.dollars_label}",
                method=(*growth.method_note(), *result.method_note()),
                warnings=(*result.warnings, *growth.warnings),
                text_columns=("series", "deflator", "measure", "start", "end"),
                sheet="Growth", extra={"base": result.base_label,
                                       "frequency": result.frequency.describe(),
                                       "dollars": result.dollars_label},
                command="realbasis deflate", files="; ".join(inputs.files))
    sys.stderr.write(f"wrote {path} (growth rates in percent, {len(growth.table)} rows)\n")


def run(args: argparse.Namespace) -> int:
    inputs = load_inputs(args)
    result = seasonally_adjust(args, compute(args, inputs))
    emit(args, inputs, result)
    write_growth(args, inputs, result)
    emit_budget(args, inputs, result)
    return 0


# --------------------------------------------------------------------------- budgets

CL254 = register_code("CL254", "outlay rates for every series given twice")


def add_budget_arguments(p: argparse.ArgumentParser) -> None:
    """Budget options: outlay-weighted authority (pipeline.outlay) and the budget table
    (pipeline.budget). Interpolation of a deflator whose periods do not fit the series'
    (calendar years for July fiscal years) is ``--interpolate``
    (add_interpolation_arguments)."""
    p.add_argument("--outlay-rates", dest="outlay_rates", action="append", default=None,
                   metavar="[NAME=]R0,R1,...",
                   help="deflate budget authority through its outlay rates: the shares spent "
                   "in the year of authority and the following years, adding up to 1 "
                   "(0.5,0.3,0.2 or 50%%,30%%,20%%); NAME=... for one series only "
                   "(repeatable); results are by year")
    p.add_argument("--budget-out", dest="budget_out", metavar="PATH", default=None,
                   help="also write the budget table (every program by year in then-year "
                   "and constant dollars, totals, real growth) as .csv, .json or .xlsx; "
                   "needs results by year (--to FY or yearly series)")


def outlay_plan(args: argparse.Namespace, names: tuple[str, ...]
                ) -> str | dict[str, str]:
    """--outlay-rates as the engine takes them: one set for every series, or per series
    (a set for every series plus NAME=... overrides gives each series its own)."""
    items = list(args.outlay_rates or [])
    common = [i for i in items if "=" not in i]
    per = {k.strip(): v for k, _, v in (i.partition("=") for i in items if "=" in i)}
    if len(common) > 1:
        raise fail(CL254, "--outlay-rates for every series is given more than once",
                   expected="one --outlay-rates R0,R1,... and NAME=R0,R1,... for exceptions",
                   found=", ".join(repr(c) for c in common),
                   fix="Keep one set for every series; name the series for the others.")
    if common and not per:
        return common[0]
    if common:
        return {n: per.get(n, common[0]) for n in names} | per
    return per


def compute_authority(args: argparse.Namespace, inputs: Inputs,
                      series: tuple[Series, ...]) -> DeflationResult:
    """With --outlay-rates: authority deflated through its outlay rates (pipeline.outlay);
    series without rates are deflated as usual."""
    from pipeline.outlay import deflate_authority

    return deflate_authority(series, inputs.deflators, args.base,
                             outlay_plan(args, tuple(s.name for s in series)),
                             to=target_frequency(args, inputs), fy_start=args.fiscal_start,
                             **interpolation_options(args))


def emit_budget(args: argparse.Namespace, inputs: Inputs, result: DeflationResult) -> None:
    """With --budget-out: the budget table of every deflator (pipeline.budget)."""
    if not getattr(args, "budget_out", None):
        return
    from pipeline.budget import from_result, write_budget

    tables = [from_result(result, d) for d in range(len(result.deflator_names))]
    path = write_budget(tables, args.budget_out, command="realbasis deflate",
                        files="; ".join(inputs.files), base=result.base_label)
    sys.stderr.write(f"wrote {path} (budget table, {result.dollars_label}; "
                     f"{len(tables[0].programs)} programs x {len(tables[0].years)} years, "
                     f"{len(tables)} deflator(s))\n")


def register(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("deflate", help="deflate money series into constant dollars of a base "
                       "period", description=__doc__.split("\n\n")[0])
    add_arguments(p)
    p.set_defaults(func=run)
    return p
