"""`realbasis check FILE`: what was found, every problem, exit 0 / 2."""

from __future__ import annotations

from conftest import DATA

from pipeline.cli import main

INTAKE = DATA / "intake"


def run(capsys, *args: str) -> tuple[int, str, str]:
    code = main(["check", *args])
    out = capsys.readouterr()
    return code, out.out, out.err


def test_clean_file_exit_0_lists_each_series(capsys):
    code, out, err = run(capsys, str(INTAKE / "long.csv"))
    assert code == 0 and err == ""
    assert "Layout: long; 5 data rows; 2 series" in out
    line = next(ln for ln in out.splitlines() if ln.startswith("Fixed-basket consumer index"))
    for word in ("[vintage 2025-03-15]", "monthly", "index", "2024-01", "2024-03",
                 "preliminary 2024-02..2024-02", "projected 2024-03..2024-03"):
        assert word in line
    rev = next(ln for ln in out.splitlines() if ln.startswith("Revenue"))
    assert rev.split()[:6] == ["Revenue", "quarterly", "flow", "USD", "2024Q1", "2024Q2"]
    assert "Problems: 0 error(s), 0 warning(s)" in out


def test_cell_errors_exit_2_and_all_are_printed(capsys):
    code, out, _ = run(capsys, str(INTAKE / "bad_number.csv"))
    assert code == 2
    assert "Problems: 2 error(s), 0 warning(s)" in out
    assert "[IN011] the cell is not a number (file bad_number.csv, row 3, column 'Revenue'" in out
    assert "row 4, column 'Cost'" in out
    assert "found: '12..5'" in out


def test_warnings_only_exit_0(capsys):
    code, out, _ = run(capsys, str(INTAKE / "gap.csv"))
    assert code == 0
    assert "warning [IN013]" in out and "missing 2024-03, 2024-04" in out
    # count and missing per series: 4 values on a 6-month range
    row = next(ln for ln in out.splitlines() if ln.startswith("Revenue"))
    assert row.split()[-3:] == ["4", "2", "final"]


def test_structural_error_exit_2_on_stderr(capsys):
    code, out, err = run(capsys, str(INTAKE / "fiscal_span.csv"))
    assert code == 2 and out == ""
    assert err.startswith("[PE102]") and "--fiscal-start" in err
    code, out, _ = run(capsys, str(INTAKE / "fiscal_span.csv"), "--fiscal-start", "4")
    assert code == 0 and "fiscal years starting April" in out and "FY2022" in out


def test_sheet_and_kind_options(capsys):
    code, out, _ = run(capsys, str(INTAKE / "workbook.xlsx"), "--sheet", "Annual",
                       "--kind", "Payroll=stock")
    assert code == 0
    assert "sheet 'Annual'" in out
    assert next(ln for ln in out.splitlines() if ln.startswith("Payroll")).split()[1:4] == [
        "calendar", "years", "stock"]
    code, _, err = run(capsys, str(INTAKE / "workbook.xlsx"), "--kind", "Payroll=level")
    assert code == 2 and "[CL001]" in err

