"""``realbasis total``: a total of money series, each deflated by its own deflator.

    realbasis total SERIES_FILE --index INDEX_FILE [--index INDEX_FILE ...]
                    --pair SERIES=DEFLATOR [--pair ...] --base PERIOD
                    [--chain none|fisher|annual] [--basis period|yoy|annual]
                    [--to M|Q|A|FY] [--fiscal-start 1-12] [--kind flow|stock] [--out PATH]

Every money series of SERIES_FILE is a part of the total and needs a ``--pair`` naming
the index (from the --index files) it is deflated by. The table has EXACTLY the columns
``period, component, nominal, real, real_growth_pct, contribution_pp``, one row per period
and component (each part, ``total``, ``residual``). ``--out`` ending in .csv writes that
table, .json and .xlsx add the method note, cautions, warnings and statuses (the workbook
also the year-on-year and annual contributions); without it the table is printed to
stdout as CSV and the notes go to stderr as ``#`` lines. Exit 0 on success, 2 on bad
input (coded message on stderr, no traceback).
"""

from __future__ import annotations

import argparse
import sys

from pipeline.commands._remedies import CLI
from pipeline.commands.deflate import TO_CHOICES, Inputs, load_inputs, target_frequency
from pipeline.errors import Problem, RealbasisError, fail
from pipeline.errors import register as register_code
from pipeline.export import check_suffix, neutralise_frame, write_table
from pipeline.model import CAUTIONS
from pipeline.totals import BASES, CHAINS, TotalResult, total_of_parts

CL301 = register_code("CL301", "--pair is not SERIES=DEFLATOR")
CL302 = register_code("CL302", "a series of the file has no --pair")
CL303 = register_code("CL303", "--pair names a series that is not in the series file")
CL304 = register_code("CL304", "--pair names a deflator that is not in the index files")
CL305 = register_code("CL305", "a series is paired more than once")

TEXT_COLUMNS = ("period", "component", "status")


def _names(names: list[str], limit: int = 8) -> str:
    head = ", ".join(repr(n) for n in names[:limit])
    return head + (f" and {len(names) - limit} more" if len(names) > limit else "")


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("series_file", metavar="SERIES_FILE",
                   help="CSV, XLSX or SDMX-CSV file with the nominal money series (the parts)")
    p.add_argument("--index", dest="index_files", metavar="INDEX_FILE", action="append",
                   required=True, help="file of price indexes (repeatable)")
    p.add_argument("--pair", dest="pairs", metavar="SERIES=DEFLATOR", action="append",
                   required=True,
                   help="deflate SERIES by the index DEFLATOR; one for every series (repeatable)")
    p.add_argument("--base", required=True, metavar="PERIOD",
                   help="base period: FY2025, 2024Q1, 2024-01, 2024, or a range 2024-01..2024-12")
    p.add_argument("--chain", choices=CHAINS, default="none",
                   help="none: sum of the parts at base-period prices (default); fisher: "
                   "chain-linked Fisher, period to period; annual: annual chain-linking, "
                   "annual-overlap method")
    p.add_argument("--basis", choices=BASES, default="period",
                   help="growth and contributions on the period before (default), on the "
                   "same period a year earlier (yoy) or of annual totals (annual)")
    p.add_argument("--to", choices=TO_CHOICES, default=None,
                   help="frequency of the results (default: the series' own)")
    p.add_argument("--fiscal-start", dest="fiscal_start", type=int, metavar="1-12",
                   choices=range(1, 13), default=None,
                   help="month the fiscal year starts in (7 = July; FY2025 = July 2024-June 2025)")
    p.add_argument("--kind", choices=("flow", "stock"), default=None,
                   help="treat every series as a flow (summed) or a stock (last value)")
    p.add_argument("--out", metavar="PATH", default=None,
                   help="write .csv, .json or .xlsx; default: print the table (CSV) to stdout")


def parse_pairs(args: argparse.Namespace, inputs: Inputs) -> dict[str, str]:
    """``--pair SERIES=DEFLATOR`` options as {series: deflator}, checked against the
    files (every problem at once). Names may hold '=': the split that names a series and
    a deflator of the files is taken."""
    series = [s.name for s in inputs.series]
    deflators = [d.name for d in inputs.deflators]
    s_set, d_set = set(series), set(deflators)
    pairs: dict[str, str] = {}
    problems: list[Problem] = []

    def problem(code: str, message: str, **kw: object) -> None:
        problems.append(fail(code, message, **kw).problems[0])  # type: ignore[arg-type]

    for text in args.pairs:
        cuts = [i for i, ch in enumerate(text) if ch == "="]
        splits = [(text[:i].strip(), text[i + 1:].strip()) for i in cuts]
        match = [(a, b) for a, b in splits if a in s_set and b in d_set]
        if not match and not any(a and b for a, b in splits):
            problem(CL301, f"--pair {text!r} is not SERIES=DEFLATOR",
                    expected="--pair 'SERIES NAME=DEFLATOR NAME'", found=repr(text),
                    fix="Write the series name, '=', and the name of its index, in quotes "
                    "when the names hold spaces.")
            continue
        if match:
            s_name, d_name = match[0]
        elif any(a in s_set for a, _ in splits):
            s_name, d_name = next((a, b) for a, b in splits if a in s_set)
            problem(CL304, f"--pair {text!r} names the deflator {d_name!r}, which no --index "
                    "file holds", expected=f"one of {_names(deflators)}", found=repr(d_name),
                    series=s_name, fix="Use an index name as realbasis check lists it (a "
                    "name found in two files is written 'FILE: NAME').")
            continue
        else:
            s_name, d_name = next(((a, b) for a, b in splits if b in d_set), splits[0])
            problem(CL303, f"--pair {text!r} names the series {s_name!r}, which is not a "
                    "money series of the series file", expected=f"one of {_names(series)}",
                    found=repr(s_name), file=str(args.series_file),
                    fix="Use the series name as realbasis check lists it.")
            continue
        if s_name in pairs:
            problem(CL305, f"the series {s_name!r} is paired more than once",
                    expected="one --pair per series",
                    found=f"{pairs[s_name]!r} and {d_name!r}", series=s_name,
                    fix="Keep one --pair for the series; to compare deflators use realbasis "
                    "deflate.")
            continue
        pairs[s_name] = d_name
    unpaired = [n for n in series if n not in pairs]
    if unpaired:
        problem(CL302, f"{len(unpaired)} series of the file have no --pair",
                expected="a --pair for every money series of the series file",
                found=f"no pair for {_names(unpaired)}", file=str(args.series_file),
                series=unpaired[0],
                fix=f"Add --pair 'NAME=DEFLATOR' for each (indexes: {_names(deflators)}).")
    if problems:
        raise RealbasisError(problems)
    return pairs


def compute(args: argparse.Namespace, inputs: Inputs) -> TotalResult:
    pairs = parse_pairs(args, inputs)
    return total_of_parts(inputs.series, inputs.deflators, pairs, args.base,
                          chain=args.chain, to=target_frequency(args, inputs),
                          kind=args.kind, fy_start=args.fiscal_start)


def _context(args: argparse.Namespace, inputs: Inputs) -> dict[str, str]:
    return {"command": "realbasis total", "files": "; ".join(inputs.files)}


def write_total(total: TotalResult, path: str, basis: str, **context: str) -> None:
    """Write the total by suffix: .csv the table exactly; .json with statuses, method
    note, cautions and warnings; .xlsx the workbook with its Contributions sheets."""
    suffix = check_suffix(path)
    if suffix == ".xlsx":
        from pipeline.workbook import write_total_workbook

        write_total_workbook(total, path, **context)
        return
    table = total.table(basis, status=suffix == ".json")  # type: ignore[arg-type]
    write_table(table, path, title=f"Total of parts in {total.dollars_label}",
                method=total.method_note(), warnings=total.warnings,
                text_columns=TEXT_COLUMNS, extra={
                    "base": total.base_label, "frequency": total.frequency.describe(),
                    "dollars": total.dollars_label, "chain": total.chain, "basis": basis,
                    "pairs": dict(total.pairs)}, **context)


def emit(args: argparse.Namespace, inputs: Inputs, total: TotalResult) -> None:
    for p in (*inputs.warnings, *total.warnings):
        sys.stderr.write("warning: " + p.render(CLI).replace("\n", "\n  ") + "\n")
    if args.out:
        write_total(total, args.out, args.basis, **_context(args, inputs))
        sys.stderr.write(f"wrote {args.out} ({total.dollars_label}; {len(total.part_names)} "
                         f"parts, {total.chain_words}, {total.frequency.describe()})\n")
        return
    table = total.table(args.basis)
    neutralise_frame(table, TEXT_COLUMNS).to_csv(sys.stdout, index=False,
                                                 lineterminator="\r\n")
    sys.stdout.flush()
    for line in total.method_note():
        sys.stderr.write(f"# {line}\n")
    for line in CAUTIONS:
        sys.stderr.write(f"# caution: {line}\n")


def run(args: argparse.Namespace) -> int:
    if args.out:
        check_suffix(args.out)  # before any work
    inputs = load_inputs(args)
    emit(args, inputs, compute(args, inputs))
    return 0


def register(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser("total", help="total money series, each deflated by its own "
                       "deflator, with contributions to real growth",
                       description=__doc__.split("\n\n")[0])
    add_arguments(p)
    p.set_defaults(func=run)
    return p
