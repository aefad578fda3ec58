"""``realbasis index ...``: the index workshop on the command line.

Sub-commands (all results as CSV on stdout, or to ``--out PATH`` ending in .csv or .json;
summaries, warnings and the usual cautions go to stderr):

* ``compute``  index numbers from an item price file (Laspeyres ... Young; fixed-base or
  chained; ``--rolling-year`` for seasonal items); CSV columns exactly ``period, index,
  matched_items``.
* ``blend``    an own cost index from component indexes and yearly spending weights
  (fixed weights, annual chain, chained Törnqvist) and the gap between them.
* ``link``     join two index segments at an overlap period or year; prints the factor.
* ``project``  extend an index with assumed annual rates (values flagged projected).
* ``convert``  then-year <-> constant-year dollars for out-year budgets.
* ``vintages`` value revisions between two vintages of an index, and (with
  ``--nominal``) how every real figure and growth rate moved; ``--revision-band`` measures
  the revisions of every vintage given, by age, and bands the current preliminary stretch.
* ``benchmark`` an indicator brought to low-frequency benchmarks by proportional Denton.
"""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Mapping, Sequence
from pathlib import Path

import pandas as pd

from pipeline import costindex, indexes, indexnum, labels, projection, revisions
from pipeline.commands._remedies import CLI
from pipeline.commands.deflate import add_interpolation_arguments, interpolation_options
from pipeline.errors import Problem, fail, register
from pipeline.ingest import read_file
from pipeline.model import CAUTIONS, Frequency, Series

WS401 = register("WS401", "choose a series from the file")
WS402 = register("WS402", "output file type not supported")
WS403 = register("WS403", "assumed rate not understood")
WS404 = register("WS404", "two vintages needed")
WS410 = register("WS410", "benchmark series cannot be paired")
WS411 = register("WS411", "say how benchmarks aggregate")
WS412 = register("WS412", "revision band option invalid")


# ---------------------------------------------------------------------------------------
# helpers shared by the sub-commands


def _warn(problems: Sequence[Problem]) -> None:
    for p in problems:
        sys.stderr.write(p.render(CLI) + "\n")


def _cautions() -> None:
    sys.stderr.write("Cautions:\n" + "".join(f"  - {c}\n" for c in CAUTIONS))


def _write(frame: pd.DataFrame, out: str | None, meta: Mapping[str, object]) -> None:
    """CSV to stdout, or to ``out`` (.csv); ``.json`` adds the method, warnings, cautions."""
    if out is None:
        frame.to_csv(sys.stdout, index=False)
        return
    path = Path(out)
    suffix = path.suffix.lower()
    if suffix == ".csv":
        frame.to_csv(path, index=False)
    elif suffix == ".json":
        doc = {**meta, "cautions": list(CAUTIONS),
               "rows": json.loads(frame.to_json(orient="records", double_precision=15))}
        path.write_text(json.dumps(doc, indent=2, ensure_ascii=False, default=str) + "\n",
                        encoding="utf-8")
    else:
        raise fail(WS402, f"cannot write {path.name}", expected="a path ending in .csv or .json",
                   found=suffix or "(no extension)", fix="Name the output file .csv or .json.")
    sys.stderr.write(f"wrote {path}\n")


def _load(path: str, fy_start: int | None, sheet: str | None = None) -> tuple[Series, ...]:
    intake = read_file(path, fy_start=fy_start, sheet=sheet)
    intake.raise_for_errors()
    _warn(intake.warnings)
    return intake.series


def _pick(series: Sequence[Series], name: str | None, file: str, what: str = "index") -> Series:
    if name is not None:
        for s in series:
            if s.name == name:
                return s
        raise fail(WS401, f"no series named {name!r} in the file",
                   expected="one of " + ", ".join(repr(s.name) for s in series), found=repr(name),
                   file=file, fix="Give the series name exactly as in the file.")
    names = list(dict.fromkeys(s.name for s in series))
    if len(names) != 1:
        raise fail(WS401, f"the file holds {len(names)} series; say which {what} to use",
                   expected="--series NAME (or a file with one series)",
                   found=", ".join(repr(n) for n in names), file=file,
                   fix="Add --series with one of the names listed.")
    chosen = [s for s in series if s.name == names[0]]
    return sorted(chosen, key=lambda s: s.vintage or "")[-1]


def _as_index(s: Series) -> Series:
    return s if s.kind == "index" else s.with_values(s.values, kind="index")


# ---------------------------------------------------------------------------------------
# compute


def _run_compute(args: argparse.Namespace) -> int:
    table = indexnum.read_prices(args.prices_file, sheet=args.sheet, fy_start=args.fy_start)
    if args.rolling_year:
        return _run_rolling_year(args, table)
    base = args.base
    span_base = None
    if base is not None:
        period, freq = labels.parse_label(base, args.fy_start)
        if freq == table.frequency:
            base = period
        else:  # a base span (e.g. a year of months): compute, then rebase to its average
            span_base, base = base, None
    weight_period = None
    if args.weight_period is not None:
        weight_period = labels.parse_label(args.weight_period, args.fy_start)[0]
    res = indexnum.compute_index(table, args.formula, chained=args.chained, base=base,
                                 weight_period=weight_period)
    values = res.values
    notes = list(res.method_note())
    if span_base is not None:
        rebased = indexes.rebase(res.to_series(), span_base, fy_start=args.fy_start)
        values = rebased.values
        notes = [n for n in notes if not n.startswith("Base period")]
        notes.append(f"Index reference period {rebased.reference} = 100 (average), the "
                     f"first period {res.labels()[0]} being the price reference.")
    frame = pd.DataFrame({"period": res.labels(), "index": values.to_numpy(),
                          "matched_items": res.matched.to_numpy()})
    _warn(res.warnings)
    sys.stderr.write(
        f"{res.name}: {res.items} items; matched per comparison {int(res.matched.min())}"
        f"-{int(res.matched.max())}, dropped in all {int(res.dropped.sum())} "
        f"(most {int(res.dropped.max())} in one comparison)\n")
    meta = {"command": "index compute", "formula": res.formula, "chained": res.chained,
            "method": notes, "dropped_items": res.dropped.tolist(),
            "warnings": [p.as_dict() for p in res.warnings]}
    _write(frame, args.out, meta)
    _cautions()
    return 0


def _run_rolling_year(args: argparse.Namespace, table: indexnum.PriceTable) -> int:
    res = indexnum.compute_rolling_year(table, args.formula, chained=args.chained,
                                        base=args.base, weight_period=args.weight_period,
                                        fy_start=args.fy_start)
    frame = pd.DataFrame({"period": res.labels(), "index": res.values.to_numpy(),
                          "matched_items": res.matched.to_numpy()})
    _warn(res.warnings)
    n = table.frequency.periods_per_year
    sys.stderr.write(
        f"{res.name}: base year {res.rolling_base} = 100; {res.items} items, each in each "
        f"of {n} seasons; matched per comparison {int(res.matched.min())}-"
        f"{int(res.matched.max())}; values from {res.labels()[0]} (the first complete year "
        "of prices)\n")
    meta = {"command": "index compute --rolling-year", "formula": res.formula,
            "chained": res.chained, "base_year": res.rolling_base,
            "method": list(res.method_note()), "dropped_items": res.dropped.tolist(),
            "warnings": [p.as_dict() for p in res.warnings]}
    _write(frame, args.out, meta)
    _cautions()
    return 0


# ---------------------------------------------------------------------------------------
# blend


def _run_blend(args: argparse.Namespace) -> int:
    comps = [_as_index(s) for s in _load(args.components_file, args.fy_start)]
    w_series = _load(args.weights, args.fy_start)
    weights = costindex.weights_from_series(w_series, weights_as=args.weights_as,
                                            source=Path(args.weights).name)
    methods = None if not args.method or "all" in args.method else args.method
    res = costindex.blend(comps, weights, methods=methods, fixed_year=args.fixed_year,
                          link=args.link, name=args.name)
    frame = res.table()
    notes = list(res.method_note())
    if args.base is not None:
        for m in res.methods:
            frame[m] = indexes.rebase(res.series(m), args.base,
                                      fy_start=args.fy_start).values.to_numpy()
        notes.append(f"Rebased: {args.base} = 100.")
    _warn(res.warnings)
    for m, g in res.gap_pp.items():
        sys.stderr.write(f"gap: fixed weights minus {costindex.METHOD_NAMES[m]}: "
                         f"{g:+.3f} percentage points a year\n")
    if args.gap_out:
        _write(res.gap_table(), args.gap_out, {"command": "index blend (gap)", "method": notes})
    meta = {"command": "index blend", "methods": list(res.methods), "method": notes,
            "gap_pp_per_year": dict(res.gap_pp), "weights_given_as": res.weights.given_as,
            "warnings": [p.as_dict() for p in res.warnings]}
    _write(frame, args.out, meta)
    _cautions()
    return 0


# ---------------------------------------------------------------------------------------
# link


def _run_link(args: argparse.Namespace) -> int:
    old = _as_index(_pick(_load(args.old_file, args.fy_start), args.old_series, args.old_file))
    new = _as_index(_pick(_load(args.new_file, args.fy_start), args.new_series, args.new_file))
    res = indexes.link(old, new, args.overlap, annual=args.annual, fy_start=args.fy_start)
    _warn(res.warnings)
    sys.stderr.write(f"link factor {res.factor:.6g} at {res.overlap}\n{res.method}\n")
    meta = {"command": "index link", "factor": res.factor, "overlap": res.overlap,
            "method": [res.method], "warnings": [p.as_dict() for p in res.warnings]}
    _write(res.series.to_long_frame(), args.out, meta)
    _cautions()
    return 0


# ---------------------------------------------------------------------------------------
# project


def parse_rate(text: str) -> float:
    """'2.5%' -> 0.025; '0.025' -> 0.025 (a bare number is a fraction)."""
    t = text.strip()
    try:
        return float(t[:-1]) / 100 if t.endswith("%") else float(t)
    except ValueError:
        raise fail(WS403, f"rate {text!r} is not a number",
                   expected="a fraction (0.025) or a percentage (2.5%)", found=repr(text),
                   fix="Write e.g. --rate 2.5% or --rate FY2027=2.5%.") from None


def parse_rates(items: Sequence[str]) -> float | dict[str, float]:
    if len(items) == 1 and "=" not in items[0]:
        return parse_rate(items[0])
    rates: dict[str, float] = {}
    for it in items:
        year, sep, value = it.partition("=")
        if not sep:
            raise fail(WS403, f"rate {it!r} has no year",
                       expected="YEAR=RATE for each year when several rates are given",
                       found=repr(it), fix="Write e.g. --rate 2027=2.5% --rate 2028=2%.")
        rates[year.strip()] = parse_rate(value)
    return rates


def rate_texts(items: Sequence[str]) -> str | dict[str, str]:
    """The --rate values as given (checked by :func:`parse_rates`), so that the engine
    reads them and an out-of-range rate is shown as it was typed."""
    parse_rates(items)
    if len(items) == 1 and "=" not in items[0]:
        return items[0]
    return {year.strip(): value for year, _, value in (it.partition("=") for it in items)}


def _run_project(args: argparse.Namespace) -> int:
    ix = _as_index(_pick(_load(args.index_file, args.fy_start), args.series, args.index_file))
    yf = Frequency("FY", args.fiscal_years) if args.fiscal_years else None
    res = projection.project(ix, rate_texts(args.rate), until=args.until, year_frequency=yf,
                             fy_start=args.fy_start)
    _warn(res.warnings)
    meta = {"command": "index project", "rates": dict(res.rates), "method": list(res.method_note())}
    _write(res.table(), args.out, meta)
    _cautions()
    return 0


# ---------------------------------------------------------------------------------------
# convert


def _run_convert(args: argparse.Namespace) -> int:
    amounts = [s for s in _load(args.amounts_file, args.fy_start) if s.kind != "index"]
    if not amounts:
        raise fail(WS401, "no money series in the amounts file",
                   expected="flow or stock series", found="only indexes", file=args.amounts_file,
                   fix="Give the budget amounts file first, the index with --index.")
    ix = _as_index(_pick(_load(args.index, args.fy_start), args.index_series, args.index))
    interp = interpolation_options(args)["interpolate"]
    if args.to == "constant":
        res = projection.to_constant(amounts, ix, args.base, fy_start=args.fy_start,
                                     interpolate=interp)  # type: ignore[arg-type]
    else:
        res = projection.to_then_year(amounts, ix, args.base, fy_start=args.fy_start,
                                      interpolate=interp)  # type: ignore[arg-type]
    _warn(res.warnings)
    meta = {"command": "index convert", "direction": res.direction, "base": res.base,
            "method": list(res.method_note())}
    _write(res.table, args.out, meta)
    _cautions()
    return 0


# ---------------------------------------------------------------------------------------
# vintages


def _run_vintages(args: argparse.Namespace) -> int:
    loads: list[Series] = []
    for i, f in enumerate(args.files):
        got = [_as_index(s) for s in _load(f, args.fy_start)]
        if args.series:
            got = [s for s in got if s.name == args.series]
        as_of = (args.old_as_of if i == 0 else args.new_as_of) if len(args.files) == 2 else None
        if as_of:
            got = [s.with_values(s.values, vintage=as_of) for s in got]
        loads.extend(got)
    grouped = revisions.vintages(loads)
    if not grouped:
        raise fail(WS401, f"no index named {args.series!r} in the files", found="none",
                   expected="the index named by --series", fix="Check the series name.")
    if len(grouped) > 1:
        raise fail(WS401, "the files hold several indexes; say which to compare",
                   expected="--series NAME", found=", ".join(repr(n) for n in grouped),
                   fix="Add --series with one of the names listed.")
    name, by_date = next(iter(grouped.items()))
    if args.revision_band:
        _check_band_options(args)
        if len(by_date) < 2:  # nothing to compare; the band says why it cannot be drawn
            _revision_band(args, by_date)
            _cautions()
            return 0
    if len(by_date) < 2:
        raise fail(WS404, f"only one vintage of {name!r} found",
                   expected="two loads with different as-of dates",
                   found=", ".join(by_date) or "(undated)",
                   fix="Give two files (or one with a vintage column), or --old-as-of/--new-as-of.")
    dates = list(by_date)
    old, new = by_date[dates[-2]], by_date[dates[-1]]
    if args.old_preliminary_last is not None:
        old = revisions.apply_status_rule(old, last_preliminary=args.old_preliminary_last)
    if args.new_preliminary_last is not None:
        new = revisions.apply_status_rule(new, last_preliminary=args.new_preliminary_last)
    comp = revisions.compare_vintages(old, new, rebase_to=args.rebase, fy_start=args.fy_start)
    _warn(comp.warnings)
    sys.stderr.write("\n".join(comp.method_note()) + "\n")
    meta = {"command": "index vintages", "method": list(comp.method_note()),
            "old_vintage": comp.old_vintage, "new_vintage": comp.new_vintage}
    _write(comp.table, args.out, meta)
    if args.nominal:
        if args.base is None:
            raise fail(WS404, "--nominal needs --base", expected="a base period, e.g. FY2025",
                       found="none", fix="Add --base.")
        money = [s for s in _load(args.nominal, args.fy_start) if s.kind != "index"]
        impact = revisions.revision_impact(money, old, new, args.base, fy_start=args.fy_start,
                                           to=_to_frequency(args), **interpolation_options(args))
        _warn(impact.warnings)
        sys.stderr.write(impact.summary.to_string(index=False) + "\n")
        _write(impact.table, args.impact_out, {"command": "index vintages (impact)",
                                               "method": list(impact.method_note())})
    if args.revision_band:
        _revision_band(args, by_date)
    _cautions()
    return 0


def _to_frequency(args: argparse.Namespace) -> Frequency | None:
    code = getattr(args, "to", None)
    if code is None:
        return None
    if code == "FY":
        if args.fy_start is None:
            raise fail(WS412, "--to FY needs the month the fiscal year starts in",
                       expected="--fy-start MONTH (e.g. 7 for July-June years)",
                       found="no --fy-start", fix="Add --fy-start.")
        return Frequency("FY", args.fy_start)
    return Frequency(code, args.fy_start or 1) if code == "Q" else Frequency(code)


def _check_band_options(args: argparse.Namespace) -> None:
    lo, hi = args.band_quantiles
    if not 0 <= lo < hi <= 100:
        raise fail(WS412, "band quantiles must be two percentages, the lower first",
                   expected="0 <= LOW < HIGH <= 100, e.g. --band-quantiles 10 90",
                   found=f"{lo:g} {hi:g}", fix="Give e.g. --band-quantiles 10 90.")
    if args.band_min_revisions < 1:
        raise fail(WS412, "--band-min-revisions must be at least 1", expected="1 or more",
                   found=str(args.band_min_revisions), fix="Give e.g. --band-min-revisions 8.")
    if args.band_out and Path(args.band_out).suffix.lower() == ".xlsx" and not args.nominal:
        raise fail(WS412, "a band workbook needs the money series",
                   expected="--nominal FILE --base PERIOD with --band-out ending .xlsx",
                   found="no --nominal", fix="Add --nominal and --base, or write .csv/.json.")


def _revision_band(args: argparse.Namespace, by_date: Mapping[str, Series]) -> None:
    from pipeline import revision_risk
    from pipeline.export import write_result

    if args.new_preliminary_last is not None:  # the rule applies to the current vintage
        latest = sorted(by_date)[-1]
        by_date = {**by_date, latest: revisions.apply_status_rule(
            by_date[latest], last_preliminary=args.new_preliminary_last)}
    money: list[Series] = []
    if args.nominal:
        money = [s for s in _load(args.nominal, args.fy_start) if s.kind != "index"]
    lo, hi = args.band_quantiles
    band = revision_risk.revision_band(
        by_date, money, args.base if money else None, to=_to_frequency(args),
        fy_start=args.fy_start, quantiles=(lo / 100, hi / 100),
        min_revisions=args.band_min_revisions, **interpolation_options(args))
    _warn(band.warnings)
    hist = band.history
    sys.stderr.write(f"revision history: {hist.count} past revision(s) of preliminary values "
                     f"from {len(hist.vintages)} vintage(s); by age (months since first "
                     "release), percent:\n")
    if not hist.by_age.empty:
        sys.stderr.write(hist.by_age.round(3).to_string(index=False) + "\n")
    for line in band.statements:
        sys.stderr.write(line + "\n")
    if not band.available:
        sys.stderr.write("no revision band (see the warning above)\n")
    if args.band_out is None:
        return
    path = Path(args.band_out)
    suffix = path.suffix.lower()
    if suffix == ".xlsx":
        from pipeline.deflate import deflate

        central = deflate(money, [by_date[band.current]], args.base, to=_to_frequency(args),
                          fy_start=args.fy_start, **interpolation_options(args))
        write_result(central, path, command="realbasis index vintages --revision-band",
                     bands=(band,))
        sys.stderr.write(f"wrote {path}\n")
    elif suffix == ".json":
        path.write_text(json.dumps(band.as_dict(), indent=2, ensure_ascii=False, default=str)
                        + "\n", encoding="utf-8")
        sys.stderr.write(f"wrote {path}\n")
    else:
        _write(band.table(), str(path), {})



# ---------------------------------------------------------------------------------------
# benchmark


def _latest_per_name(series: Sequence[Series]) -> list[Series]:
    out: dict[str, Series] = {}
    for s in sorted(series, key=lambda s: s.vintage or ""):
        out[s.name] = s
    return list(out.values())


def _pairs(indicators: Sequence[Series], benchmarks: Sequence[Series],
           args: argparse.Namespace) -> list[tuple[Series, Series]]:
    ind, bench = _latest_per_name(indicators), _latest_per_name(benchmarks)
    if len(ind) == 1 and len(bench) == 1:
        return [(ind[0], bench[0])]
    by_name = {b.name: b for b in bench}
    pairs = [(i, by_name[i.name]) for i in ind if i.name in by_name]
    if not pairs:
        raise fail(WS410, "no indicator has benchmarks of the same name",
                   expected="one series in each file, or the same series names in both",
                   found="indicators " + ", ".join(repr(i.name) for i in ind)
                   + "; benchmarks " + ", ".join(repr(b.name) for b in bench),
                   file=args.benchmarks,
                   fix="Name each benchmark series like its indicator, or give one series "
                   "per file.")
    unpaired = [i.name for i in ind if i.name not in by_name]
    if unpaired:
        sys.stderr.write("not benchmarked (no benchmarks of that name): "
                         + ", ".join(repr(n) for n in unpaired) + "\n")
    return pairs


def _run_benchmark(args: argparse.Namespace) -> int:
    from pipeline import benchmark as bm

    pairs = _pairs(_load(args.indicator_file, args.fy_start), _load(args.benchmarks, args.fy_start),
                   args)
    frames, notes, warnings = [], [], []
    extrapolated: dict[str, list[str]] = {}
    not_final: dict[str, dict[str, str]] = {}
    for ind, bench in pairs:
        if args.aggregation is None and bench.kind == "stock":
            raise fail(WS411, f"say how the values of {bench.name!r} aggregate",
                       expected="--aggregation average (indexes, rates) or sum (flows)",
                       found=f"{bench.name!r} read as a stock", file=args.benchmarks,
                       fix="Pass --aggregation average or --aggregation sum.")
        res = bm.benchmark(ind, bench, aggregation=args.aggregation)
        t = res.table()
        frames.append(pd.DataFrame({"series": res.series.name, "period": t["period"],
                                    "value": t["value"]}))
        notes.extend(res.method_note())
        warnings.extend(res.warnings)
        ex = t.loc[t["extrapolated"], "period"].tolist()
        extrapolated[res.series.name] = ex
        nf = t[t["status"] != "final"]
        not_final[res.series.name] = dict(zip(nf["period"], nf["status"], strict=True))
        sys.stderr.write(
            f"{res.series.name}: benchmarked to {bench.name!r} ({res.aggregation}); "
            f"{len(t)} periods {t['period'].iloc[0]} to {t['period'].iloc[-1]}; benchmarks "
            f"used {res.used[0]} to {res.used[-1]}; {len(ex)} extrapolated"
            + (f" ({ex[0]} to {ex[-1]})" if ex else "")
            + (f"; {len(nf)} not final" if len(nf) else "") + "\n")
    frame = pd.concat(frames, ignore_index=True)
    if len(pairs) == 1:
        frame = frame.drop(columns=["series"])
    _warn(warnings)
    sys.stderr.write("\n".join(notes) + "\n")
    meta = {"command": "index benchmark", "method": notes, "extrapolated": extrapolated,
            "not_final": not_final, "warnings": [p.as_dict() for p in warnings]}
    _write(frame, args.out, meta)
    _cautions()
    return 0


# ---------------------------------------------------------------------------------------
# registration


def register(sub: argparse._SubParsersAction) -> None:  # type: ignore[name-defined]
    p = sub.add_parser("index", help="index workshop: compute, blend, link, project, convert, "
                       "compare vintages, benchmark")
    isub = p.add_subparsers(dest="index_command", metavar="SUBCOMMAND",
                            parser_class=type(p))
    isub.required = True

    def common(q: argparse.ArgumentParser) -> None:
        q.add_argument("--fy-start", type=int, default=None, metavar="MONTH",
                       help="month (1-12) fiscal years start in, for FY labels")
        q.add_argument("--out", default=None, metavar="PATH",
                       help="write .csv or .json (default: CSV on stdout)")

    c = isub.add_parser("compute", help="index numbers from item prices and quantities")
    c.add_argument("prices_file", metavar="PRICES_FILE",
                   help="long CSV/XLSX: period, item, price and quantity or expenditure")
    c.add_argument("--formula", required=True, choices=indexnum.FORMULAS)
    c.add_argument("--chained", action="store_true", help="chain period-to-period links "
                   "(with --rolling-year: year-to-year links)")
    c.add_argument("--rolling-year", dest="rolling_year", action="store_true",
                   help="rolling-year index for seasonal items: each item in each month "
                   "(quarter) is a separate item; each period compares the 12 months (4 "
                   "quarters) ending in it with the base year")
    c.add_argument("--base", default=None, metavar="PERIOD",
                   help="period = 100 (default: the first); a longer span (e.g. 2024 for "
                   "monthly prices) makes its average 100; with --rolling-year the base YEAR "
                   "(default: the first calendar year)")
    c.add_argument("--weight-period", default=None, metavar="PERIOD",
                   help="Lowe/Young: period whose quantities/expenditures weight the items "
                   "(a year with --rolling-year)")
    c.add_argument("--sheet", default=None, help="workbook sheet")
    common(c)
    c.set_defaults(func=_run_compute)

    b = isub.add_parser("blend", help="own cost index from component indexes and weights")
    b.add_argument("components_file", metavar="COMPONENTS_FILE",
                   help="component price indexes (any intake layout)")
    b.add_argument("--weights", required=True, metavar="WEIGHTS_FILE",
                   help="spending weights per year, one series per component")
    b.add_argument("--method", action="append", choices=[*costindex.METHODS, "all"],
                   help="repeatable; default all (fixed only when one weights year)")
    b.add_argument("--weights-as", default="auto", choices=["auto", "shares", "amounts"])
    b.add_argument("--link", default="period", choices=["period", "annual"],
                   help="annual chain link: last period of the previous year, or its average")
    b.add_argument("--fixed-year", default=None, metavar="YEAR",
                   help="weights year of the fixed-weight version (default: the first)")
    b.add_argument("--base", default=None, metavar="PERIOD", help="rebase results (= 100)")
    b.add_argument("--name", default="Own cost index")
    b.add_argument("--gap-out", default=None, metavar="PATH",
                   help="write the year-by-year gap table (.csv/.json)")
    common(b)
    b.set_defaults(func=_run_blend)

    ln = isub.add_parser("link", help="join two index segments at an overlap")
    ln.add_argument("old_file", metavar="OLD_FILE")
    ln.add_argument("new_file", metavar="NEW_FILE")
    ln.add_argument("--old-series", default=None, metavar="NAME")
    ln.add_argument("--new-series", default=None, metavar="NAME")
    ln.add_argument("--overlap", default=None, metavar="PERIOD",
                    help="overlap period or year (default: the latest common one)")
    ln.add_argument("--annual", action="store_true", help="link on a whole-year overlap")
    common(ln)
    ln.set_defaults(func=_run_link)

    pr = isub.add_parser("project", help="extend an index with assumed annual rates")
    pr.add_argument("index_file", metavar="INDEX_FILE")
    pr.add_argument("--rate", action="append", required=True, metavar="[YEAR=]RATE",
                    help="2.5%% or 0.025 for every year, or YEAR=RATE per year (repeat)")
    pr.add_argument("--until", required=True, metavar="PERIOD", help="last period to project")
    pr.add_argument("--series", default=None, metavar="NAME")
    pr.add_argument("--fiscal-years", type=int, default=None, metavar="MONTH",
                    help="rates are per fiscal year starting in MONTH")
    common(pr)
    pr.set_defaults(func=_run_project)

    cv = isub.add_parser("convert", help="then-year <-> constant-year dollars")
    cv.add_argument("amounts_file", metavar="AMOUNTS_FILE")
    cv.add_argument("--index", required=True, metavar="INDEX_FILE")
    cv.add_argument("--index-series", default=None, metavar="NAME")
    cv.add_argument("--base", required=True, metavar="PERIOD")
    cv.add_argument("--to", required=True, choices=["constant", "then"])
    add_interpolation_arguments(cv, indicator=False)
    common(cv)
    cv.set_defaults(func=_run_convert)

    v = isub.add_parser("vintages", help="revisions between two vintages of an index")
    v.add_argument("files", nargs="+", metavar="FILE",
                   help="one file with a vintage column, or OLD_FILE NEW_FILE")
    v.add_argument("--series", default=None, metavar="NAME")
    v.add_argument("--old-as-of", default=None, metavar="DATE")
    v.add_argument("--new-as-of", default=None, metavar="DATE")
    v.add_argument("--old-preliminary-last", type=int, default=None, metavar="N",
                   help="mark the old vintage's last N values preliminary")
    v.add_argument("--new-preliminary-last", type=int, default=None, metavar="N")
    v.add_argument("--rebase", default=None, metavar="PERIOD",
                   help="rebase both vintages to this period before comparing")
    v.add_argument("--nominal", default=None, metavar="FILE",
                   help="money series to deflate with both vintages")
    v.add_argument("--base", default=None, metavar="PERIOD",
                   help="constant-dollar base for --nominal")
    v.add_argument("--impact-out", default=None, metavar="PATH")
    v.add_argument("--to", choices=["M", "Q", "A", "FY"], default=None,
                   help="frequency of the real results of --nominal (default: the series' own)")
    v.add_argument("--revision-band", dest="revision_band", action="store_true",
                   help="measure how every vintage given revised the preliminary values, by "
                   "age, and band the latest vintage's preliminary stretch (and, with "
                   "--nominal, the real values and real growth resting on it)")
    v.add_argument("--band-quantiles", dest="band_quantiles", nargs=2, type=float,
                   default=[10.0, 90.0], metavar=("LOW", "HIGH"),
                   help="the band's quantiles of past revisions, in percent (default 10 90)")
    v.add_argument("--band-min-revisions", dest="band_min_revisions", type=int,
                   default=8, metavar="N",
                   help="fewer past revisions than N give no band (default 8)")
    v.add_argument("--band-out", dest="band_out", default=None, metavar="PATH",
                   help="write the band: .csv (the table), .json (everything) or .xlsx (the "
                   "audit workbook of the real figures with a Revision band sheet)")
    add_interpolation_arguments(v, indicator=False)
    common(v)
    v.set_defaults(func=_run_vintages)

    from pipeline.benchmark import AGGREGATIONS

    bk = isub.add_parser("benchmark", help="bring a monthly or quarterly indicator to "
                         "annual (or quarterly) benchmarks by proportional Denton")
    bk.add_argument("indicator_file", metavar="INDICATOR_FILE",
                    help="the more frequent indicator series (any intake layout)")
    bk.add_argument("--benchmarks", required=True, metavar="LOW_FREQUENCY_FILE",
                    help="the benchmark values (quarterly, calendar or fiscal years); "
                    "series paired with the indicator's by name unless each file holds one")
    bk.add_argument("--aggregation", choices=AGGREGATIONS, default=None,
                    help="the benchmarks are averages (indexes) or sums (flows) of the "
                    "shorter periods (default: from the kind of the benchmark series)")
    common(bk)
    bk.set_defaults(func=_run_benchmark)
