"""The Data intake screen's view model (dashboard/screens/intake/view.py), without a
browser: uploads are size-checked before decoding, read through the engine's intake with
the user's corrections, and added to the workspace (never to the shared demo). The files
are small invented ones for plumbing tests, and the demo's own illustrative files.
"""

from __future__ import annotations

import base64
from pathlib import Path

import pytest
from dash import no_update

from dashboard.data import DataAccess, WorkspaceRef
from dashboard.screens.intake import view
from pipeline.errors import RealbasisError
from pipeline.settings import Settings


def _data_url(data: bytes) -> str:
    return "data:text/csv;base64," + base64.b64encode(data).decode()


def test_upload_over_the_limit_is_refused_before_decoding_with_sizes_stated():
    with pytest.raises(RealbasisError) as err:
        view.decode_upload(_data_url(b"x" * 5000), "big.csv", 2000)
    assert err.value.code == "UI001"
    text = str(err.value)
    assert "4.9 kB" in text and "2,000 bytes" in text and "REALBASIS_MAX_UPLOAD_BYTES" in text


def test_upload_decodes_and_rejects_garbage():
    assert view.decode_upload(_data_url(b"period,a\n2024,1\n"), "f.csv", 2000) == b"period,a\n2024,1\n"
    with pytest.raises(RealbasisError) as err:
        view.decode_upload("data:text/csv;base64,@@@@", "f.csv", 2000)
    assert err.value.code == "UI002"
    with pytest.raises(RealbasisError):
        view.decode_upload(None, "f.csv", 2000)


def test_preview_shows_the_first_rows_as_written():
    _cols, rows = view.preview(b"period,Sales (USD)\n2024-01,1 234\n2024-02,1 300\n", "f.csv")
    assert rows[0] == {"column 1": "period", "column 2": "Sales (USD)"}
    assert rows[1]["column 2"] == "1 234"


def test_receive_keeps_the_file_and_interpret_lists_series(access: DataAccess):
    csv = b"period,Sales (USD thousands)\n2024-01,10\n2024-02,11\n2024-03,oops\n"
    pending, _status = view.receive(access, _data_url(csv), "sales.csv")
    assert pending is not None and pending["filename"] == "sales.csv"
    steps: list[tuple[int, int]] = []
    _summary, _series_table, problems, _preview, options, disabled, sheets = view.interpret(
        access, pending, 0, {}, lambda a, b: steps.append((a, b)))
    assert steps[-1] == (4, 4)
    assert options == [{"label": "Sales", "value": "Sales"}] and sheets == []
    # the bad cell is reported with its location, and blocks adding the file
    text = str(problems.to_plotly_json())
    assert "row 4" in text and "oops" in text
    assert disabled is True


def test_receive_refuses_a_big_file_with_a_clear_message(access: DataAccess):
    pending, status = view.receive(access, _data_url(b"y" * 3000), "big.csv")
    assert pending is None
    assert "UI001" in str(status.to_plotly_json()) and "File refused" in str(status.to_plotly_json())


def test_kind_correction_is_applied_when_reading_again(access: DataAccess):
    csv = b"period,Thing\n2024-01,5\n2024-02,7\n2024-03,3\n"  # guessed a flow
    pending, _ = view.receive(access, _data_url(csv), "t.csv")
    kinds = view.apply_kind({}, "Thing", "index")
    assert kinds == {"Thing": "index"}
    before = str(view.interpret(access, pending, 0, {})[1].to_plotly_json())
    after = str(view.interpret(access, pending, 0, kinds)[1].to_plotly_json())
    assert ">flow</td>" in before and ">index</td>" in after  # the kind column's cell


def test_adding_to_the_demo_starts_a_new_workspace_with_the_demo_indexes(access: DataAccess):
    demo_ref = access.demo_ref()
    csv = b"period,Widgets revenue (USD)\n2024-01,10\n2024-02,11\n2024-03,12\n"
    pending, _ = view.receive(access, _data_url(csv), "widgets.csv")
    new_ref, message = view.add(access, demo_ref, pending, 0, {})
    assert new_ref is not None and new_ref.id != demo_ref.id
    ws = access.load(new_ref)
    assert list(ws.series) == ["Widgets revenue"]
    assert "Chained consumer index" in ws.indexes
    assert "illustrative" in str(message.to_plotly_json())
    # the shared demo workspace did not change
    assert access.load(WorkspaceRef(demo_ref.id, 0)).version == demo_ref.version
    events = [e.event for e in access.store.audit(new_ref.id)]
    assert "upload" in events


def test_add_refuses_a_file_with_errors(access: DataAccess):
    ws = access.create("mine")
    pending, _ = view.receive(access, _data_url(b"period,A\n2024-01,1\n2024-02,x\n"), "a.csv")
    new_ref, message = view.add(access, WorkspaceRef(ws.id, ws.version), pending, 0, {})
    assert new_ref is None and "Not added" in str(message.to_plotly_json())


def test_intake_says_how_the_file_was_read(access: DataAccess):
    pending, _ = view.receive(access, _data_url(b"period;Sales\n2024-01;1,5\n2024-02;2,5\n"),
                                "semi.csv")
    summary = str(view.interpret(access, pending, 0, {})[0].to_plotly_json())
    assert "semicolon-separated" in summary and "comma (1.234,5)" in summary


def test_workbook_sheet_can_be_chosen(access: DataAccess, tmp_path: Path):
    import io

    from openpyxl import Workbook

    wb = Workbook()
    first = wb.active
    first.title = "Notes"
    first.append(["This sheet has no table"])
    data = wb.create_sheet("Revenue")
    data.append(["period", "Stores revenue (USD)"])
    for m in range(1, 13):
        data.append([f"2024-{m:02d}", 100 + m])
    buf = io.BytesIO()
    wb.save(buf)
    contents = ("data:application/vnd.openxmlformats-officedocument.spreadsheetml.sheet;base64,"
                + base64.b64encode(buf.getvalue()).decode())
    access2 = DataAccess(Settings(data_dir=str(tmp_path / "x")))
    pending, _ = view.receive(access2, contents, "book.xlsx")
    out = view.interpret(access2, pending, 0, {}, sheet="Revenue")
    assert out[4] == [{"label": "Stores revenue", "value": "Stores revenue"}]
    assert {"label": "Revenue", "value": "Revenue"} in out[6]
    assert "sheet 'Revenue'" in str(out[0].to_plotly_json()).replace("\\'", "'")


def test_fiscal_labels_without_a_start_month_say_where_to_choose_it(tmp_path: Path,
                                                                    demo_dir: Path):
    data = DataAccess(Settings(data_dir=str(tmp_path)))
    raw = (demo_dir / "tallmere_program_spending.csv").read_bytes()
    pending, _ = view.receive(data, "data:text/csv;base64," + base64.b64encode(raw).decode(),
                                "tallmere.csv")
    out = view.interpret(data, pending, 0, {})
    assert "PE102" in str(out[2].to_plotly_json())
    assert "Choose the month the fiscal year starts in" in str(out[0].to_plotly_json())
    ok = view.interpret(data, pending, 7, {})
    assert ok[5] is False and len(ok[4]) == 4  # four programs, nothing blocks adding


def test_reading_clears_the_received_banner_but_keeps_a_refusal(access: DataAccess):
    csv = b"period,Sales (USD thousands)\n2024-01,10\n2024-02,11\n"
    pending, status = view.receive(access, _data_url(csv), "sales.csv")
    assert "Reading it" in str(status.to_plotly_json())
    # once read, the "Received ... Reading it…" line goes: the summary is the outcome
    assert view.status_after_reading(pending) is None
    # a refused file leaves no pending upload: its message must stay
    refused, message = view.receive(access, _data_url(b"y" * 3000), "big.csv")
    assert refused is None and "UI001" in str(message.to_plotly_json())
    assert view.status_after_reading(refused) is no_update


def test_added_message_follows_the_workspace_version(access: DataAccess):
    ws = access.create("mine")
    pending, _ = view.receive(access, _data_url(b"period,Sales (USD)\n2024-01,1\n2024-02,2\n"),
                                "s.csv")
    new_ref, message, summary = view.add_with_summary(
        access, WorkspaceRef(ws.id, ws.version), pending, 0, {})
    assert new_ref is not None and new_ref.version == 2
    assert "now at version 2" in str(message.to_plotly_json())
    added_at = {**new_ref.as_dict(), "summary": summary}
    # the header shows the same version: nothing to restate
    assert view.confirmation_after_change(added_at, new_ref) is no_update
    # another screen saves version 3: the message must not go on saying "version 2" alone
    later = access.save(access.load(new_ref), action="rebase")
    text = str(view.confirmation_after_change(
        added_at, WorkspaceRef(later.id, later.version)).to_plotly_json())
    assert "now at version 3" in text and "added as version 2" in text and summary in text
    # another workspace opened: the confirmation is about a workspace no longer shown
    other = access.create("other")
    assert view.confirmation_after_change(added_at, WorkspaceRef(other.id, 1)) is None


def test_workspace_contents_lists_series_and_the_files_added(access: DataAccess):
    ws = access.create("mine")
    csv = b"period,Sales (USD thousands),Price index\n2024-01,1,100\n2024-02,2,101\n"
    pending, _ = view.receive(access, _data_url(csv), "sales.csv")
    new_ref, _ = view.add(access, WorkspaceRef(ws.id, ws.version), pending, 0,
                            {"Price index": "index"})
    assert new_ref is not None
    series, uploads = view.workspace_contents(access, new_ref)
    text = str(series.to_plotly_json())
    for word in ("Sales", "Price index", "USD thousands", "monthly", "2024-01 – 2024-02",
                 "all final", "flow", "index"):
        assert word in text, word
    up = str(uploads.to_plotly_json())
    assert "sales.csv" in up and f"{len(csv):,}" in up and "editor" in up
    rows = view.upload_rows(access.store.audit(new_ref.id))
    assert [(r["filename"], r["version"]) for r in rows] == [("sales.csv", "2")]
    # an empty workspace says so
    empty = access.create("empty")
    series, uploads = view.workspace_contents(access, WorkspaceRef(empty.id, 1))
    assert "no series yet" in str(series.to_plotly_json())
    assert "No file has been added" in str(uploads.to_plotly_json())


def test_upload_limit_message_names_the_limit():
    err = view.too_large(None, 50 * 1024 * 1024)
    p = err.problems[0]
    assert p.code == "UI001" and "50.0 MB" in p.message and "52,428,800" in p.expected
    assert "REALBASIS_MAX_UPLOAD_BYTES" in p.fix


def test_the_workspace_fiscal_year_is_shown_inferred_and_settable(access: DataAccess):
    """A workspace's fiscal year comes from its fiscal series when they agree, can be set
    (saved with the workspace, and then it wins) and is used to read the next file."""
    import dataclasses

    from pipeline.fiscal import SETTING

    demo_ref = access.demo_ref()
    demo = access.load(demo_ref)
    text, options, value = view.fiscal_view(demo)
    assert "Fiscal years start in July" in str(text.to_plotly_json())
    assert "taken from the workspace's 4 fiscal series" in str(text.to_plotly_json())
    assert options[0] == {"label": "Taken from the fiscal series (July)", "value": 0}
    assert value == 0
    # set: saved (a copy, since the demo is shared), and shown as set
    new_ref, message = view.save_fiscal_year(access, demo_ref, 10)
    assert new_ref is not None and "Saved as version" in str(message.to_plotly_json())
    saved = access.load(new_ref)
    assert saved.settings[SETTING] == 10
    text, _options, value = view.fiscal_view(saved)
    assert value == 10 and "as set for this workspace" in str(text.to_plotly_json())
    # the fiscal series now disagree with the setting: PE301, in the dashboard's words
    assert "PE301" in str(text.to_plotly_json())
    cleared, _ = view.save_fiscal_year(access, new_ref, 0)
    assert SETTING not in access.load(cleared).settings
    # a workspace with no fiscal series and no setting: said plainly, none assumed
    empty = access.create("empty")
    text, _o, _v = view.fiscal_view(dataclasses.replace(empty))
    assert "No fiscal year is set" in str(text.to_plotly_json())


def test_a_file_of_fiscal_labels_is_read_with_the_workspace_fiscal_year(access: DataAccess):
    csv = b"period,Program A (USD)\nFY2024,1\nFY2025,2\n"
    pending, _ = view.receive(access, _data_url(csv), "budget.csv")
    refused = view.interpret(access, pending, 0, {})
    assert "PE102" in str(refused[2].to_plotly_json())
    read = view.interpret(access, pending, 0, {}, workspace_fy=7)
    assert "fiscal years starting July" in str(read[1].to_plotly_json())
    assert read[5] is False  # can be added
    assert view.month_options(7)[0]["label"] == ("As the workspace: fiscal year starts in "
                                                 "July")


def test_reading_note_is_the_engines_and_names_skipped_title_rows():
    # agencies put titles above their tables (common practice); the screen shows what
    # the intake did, in the engine's own words, plus where to correct kinds
    from pipeline.ingest import read_file

    text = ("Table 1. Illustrative revenue\n\nperiod,Sales (USD)\n2024-01,1\n2024-02,\n"
            "2024-03,3\n")
    intake = read_file(text.encode(), filename="titled.csv")
    lines = view.reading_note(intake)
    assert lines[:-1] == [str(x) for x in intake.note]
    assert any("above the header skipped" in x for x in lines), lines
    assert any("missing" in x and "never bridged" in x for x in lines), lines
    assert "Series to correct" in lines[-1]
    assert not any("--" in x for x in lines)  # no command-line option on a screen
