"""The dashboard's callback bodies and plain functions, without a browser.

Numbers shown on screen come from the engine; these tests check that the dashboard asks
the engine the right question and shows the answer faithfully (base stated, statuses
kept, exact growth split, verdicts right). The hand-made examples use the textbook
definitions cited beside each check; the demo data is used only to exercise the screens.
"""

from __future__ import annotations

import base64
import dataclasses
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from dashboard import components, figures, logic
from dashboard.data import DEMO_NAME, DataAccess, WorkspaceRef
from dashboard.demo import build_demo_workspace
from dashboard.screens import discover, intake, real, revisions, shelf, spread
from pipeline.errors import RealbasisError
from pipeline.model import MONTHLY, QUARTERLY, Frequency, Series, Workspace
from pipeline.settings import Settings
from pipeline.store import WorkspaceStore

# --------------------------------------------------------------------------- fixtures


def _monthly(name: str, values: list[float], start: str = "2023-01", kind: str = "flow",
             unit: str | None = "USD", status: list[str] | None = None,
             vintage: str | None = None) -> Series:
    idx = pd.period_range(start, periods=len(values), freq="M")
    st = pd.Series(status, index=idx, dtype=object) if status else None
    return Series(name, pd.Series(values, index=idx, dtype=float), MONTHLY, kind=kind,  # type: ignore[arg-type]
                  unit=unit, status=st, vintage=vintage)


@pytest.fixture()
def access(tmp_path: Path) -> DataAccess:
    return DataAccess(Settings(data_dir=str(tmp_path), max_upload_bytes=2000))


@pytest.fixture(scope="module")
def demo(tmp_path_factory: pytest.TempPathFactory) -> Workspace:
    d = tmp_path_factory.mktemp("demo")
    return build_demo_workspace(WorkspaceStore(f"sqlite:///{d}/s.sqlite"), DEMO_NAME)


@pytest.fixture()
def small() -> Workspace:
    """Two years of a flat nominal series and two made-up indexes."""
    nominal = _monthly("Sales", [100.0] * 12 + [103.0] * 12)
    # index A rises 2 % between the years, index B 5 %.
    a = _monthly("Index A", [100.0] * 12 + [102.0] * 12, kind="index", unit="index",
                 vintage="2024-12-31")
    b = _monthly("Index B", [100.0] * 12 + [105.0] * 12, kind="index", unit="index",
                 status=["final"] * 18 + ["preliminary"] * 6, vintage="2024-12-31")
    return Workspace("w1", "small", 3, series={"Sales": nominal},
                     indexes={"Index A": {"2024-12-31": a}, "Index B": {"2024-12-31": b}})


# --------------------------------------------------------------------------- uploads


def _data_url(data: bytes) -> str:
    return "data:text/csv;base64," + base64.b64encode(data).decode()


def test_upload_over_the_limit_is_refused_before_decoding_with_sizes_stated():
    with pytest.raises(RealbasisError) as err:
        logic.decode_upload(_data_url(b"x" * 5000), "big.csv", 2000)
    assert err.value.code == "UI001"
    text = str(err.value)
    assert "4.9 kB" in text and "2,000 bytes" in text and "REALBASIS_MAX_UPLOAD_BYTES" in text


def test_upload_decodes_and_rejects_garbage():
    assert logic.decode_upload(_data_url(b"period,a\n2024,1\n"), "f.csv", 2000) == b"period,a\n2024,1\n"
    with pytest.raises(RealbasisError) as err:
        logic.decode_upload("data:text/csv;base64,@@@@", "f.csv", 2000)
    assert err.value.code == "UI002"
    with pytest.raises(RealbasisError):
        logic.decode_upload(None, "f.csv", 2000)


def test_preview_shows_the_first_rows_as_written():
    _cols, rows = logic.preview(b"period,Sales (USD)\n2024-01,1 234\n2024-02,1 300\n", "f.csv")
    assert rows[0] == {"column 1": "period", "column 2": "Sales (USD)"}
    assert rows[1]["column 2"] == "1 234"


def test_receive_keeps_the_file_and_interpret_lists_series(access: DataAccess):
    csv = b"period,Sales (USD thousands)\n2024-01,10\n2024-02,11\n2024-03,oops\n"
    pending, _status = intake.receive(access, _data_url(csv), "sales.csv")
    assert pending is not None and pending["filename"] == "sales.csv"
    steps: list[tuple[int, int]] = []
    _summary, _series_table, problems, _preview, options, disabled, sheets = intake.interpret(
        access, pending, 0, {}, lambda a, b: steps.append((a, b)))
    assert steps[-1] == (4, 4)
    assert options == [{"label": "Sales", "value": "Sales"}] and sheets == []
    # the bad cell is reported with its location, and blocks adding the file
    text = str(problems.to_plotly_json())
    assert "row 4" in text and "oops" in text
    assert disabled is True


def test_receive_refuses_a_big_file_with_a_clear_message(access: DataAccess):
    pending, status = intake.receive(access, _data_url(b"y" * 3000), "big.csv")
    assert pending is None
    assert "UI001" in str(status.to_plotly_json()) and "File refused" in str(status.to_plotly_json())


def test_kind_correction_is_applied_when_reading_again(access: DataAccess):
    csv = b"period,Thing\n2024-01,5\n2024-02,7\n2024-03,3\n"  # guessed a flow
    pending, _ = intake.receive(access, _data_url(csv), "t.csv")
    kinds = intake.apply_kind({}, "Thing", "index")
    assert kinds == {"Thing": "index"}
    before = str(intake.interpret(access, pending, 0, {})[1].to_plotly_json())
    after = str(intake.interpret(access, pending, 0, kinds)[1].to_plotly_json())
    assert "children='flow'" in before and "children='index'" in after


def test_adding_to_the_demo_starts_a_new_workspace_with_the_demo_indexes(access: DataAccess):
    demo_ref = access.demo_ref()
    csv = b"period,Widgets revenue (USD)\n2024-01,10\n2024-02,11\n2024-03,12\n"
    pending, _ = intake.receive(access, _data_url(csv), "widgets.csv")
    new_ref, message = intake.add(access, demo_ref, pending, 0, {})
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
    pending, _ = intake.receive(access, _data_url(b"period,A\n2024-01,1\n2024-02,x\n"), "a.csv")
    new_ref, message = intake.add(access, WorkspaceRef(ws.id, ws.version), pending, 0, {})
    assert new_ref is None and "Not added" in str(message.to_plotly_json())


def test_add_intake_files_indexes_by_vintage_and_money_by_name(small: Workspace):
    newer = _monthly("Index A", [1.0, 2.0], kind="index", vintage="2025-06-30")
    money = _monthly("Costs", [5.0, 6.0])
    ws, summary = logic.add_intake(small, [newer, money])
    assert set(ws.indexes["Index A"]) == {"2024-12-31", "2025-06-30"}
    assert set(ws.series) == {"Sales", "Costs"}
    assert summary.startswith("Added 1 money series and 1 index series")
    assert logic.pick_index(ws, "Index A").vintage == "2025-06-30"  # latest by default


# --------------------------------------------------------------------------- choices


def test_default_base_is_the_last_complete_year():
    s = _monthly("S", [1.0] * 21, start="2024-01")  # to 2025-09
    assert logic.default_base(s) == "2024"
    q = Series("Q", pd.Series([1.0] * 8, index=pd.period_range("2023Q1", periods=8, freq="Q")),
               QUARTERLY)
    assert logic.default_base(q) == "2024"
    fy = Frequency("FY", 7)
    a = Series("F", pd.Series([1.0, 2.0], index=pd.period_range("2024", periods=2,
                                                                  freq=fy.pandas_freq)), fy)
    assert logic.default_base(a) == "FY2025"


def test_automatic_frequency_follows_a_less_frequent_deflator():
    s = _monthly("S", [1.0] * 12)
    q = Series("D", pd.Series([1.0] * 4, index=pd.period_range("2023Q1", periods=4, freq="Q")),
               QUARTERLY, kind="index")
    assert logic.parse_frequency("auto", s, [q]) == QUARTERLY
    assert logic.parse_frequency("auto", s, [_monthly("M", [1.0] * 3, kind="index")]) is None
    assert logic.parse_frequency("FY-7") == Frequency("FY", 7)


def test_total_sums_series_and_keeps_the_worst_status(small: Workspace):
    other = _monthly("Other", [1.0] * 23 + [float("nan")],
                     status=["final"] * 20 + ["projected"] * 4)
    ws = dataclasses.replace(small, series={**small.series, "Other": other})
    total = logic.pick_series(ws, logic.TOTAL)
    assert total.values.iloc[0] == 101.0
    assert math.isnan(total.values.iloc[-1])  # a part is missing: the total is missing
    assert total.status is not None and total.status.iloc[-2] == "projected"
    option = next(o for o in logic.series_options(ws) if o["value"].startswith(logic.TOTAL))
    assert option["label"].startswith("Total of 2 series")
    assert logic.pick_series(ws, option["value"]).values.iloc[0] == 101.0


def test_series_are_cut_to_the_span_every_deflator_covers(small: Workspace):
    short = _monthly("Short", [100.0] * 18, kind="index")
    cut, note = logic.trim_to_cover(small.series["Sales"], [short])
    assert cut.values.index[-1] == pd.Period("2024-06", "M")
    assert note and "2023-01 to 2024-06" in note


# --------------------------------------------------------------------------- real terms


def test_real_values_are_nominal_times_base_index_over_index(small: Workspace):
    # Constant dollars of base B: real(t) = nominal(t) * I(B) / I(t) (IMF Quarterly
    # National Accounts Manual 2017, ch. 8; DESIGN.md facts of the trade).
    c = logic.compute_real(small, "Sales", "Index B", "2023")
    assert c.dollars_label == "constant 2023 dollars"
    jan24 = c.frame.set_index("period").loc["2024-01"]
    assert jan24["real"] == pytest.approx(103.0 * 100.0 / 105.0)
    # the status of the index travels to the real values it touched
    assert c.frame["status"].iloc[-1] == "preliminary"
    assert "constant 2023 dollars" in logic.real_title(c)
    rows = {r["measure"]: r for r in logic.growth_summary(c.nominal, c.real, c.frequency,
                                                          annualise=False)}
    assert "2024-12 on a year earlier" in rows
    assert not any("annualised" in m for m in rows)


def test_growth_split_is_exact_not_a_difference(small: Workspace):
    # (1 + nominal) = (1 + real)(1 + price): real growth = (1.03 / 1.05) - 1, not 3 % - 5 %
    # (DESIGN.md; IMF QNA Manual 2017, ch. 8 on volume and price measures).
    c = logic.compute_real(small, "Sales", "Index B", "2023", to="A")
    rows = {r["measure"]: r for r in logic.growth_summary(c.nominal, c.real, c.frequency)}
    r = rows["2024 on 2023"]
    assert r["nominal"] == pytest.approx(0.03)
    assert r["price"] == pytest.approx(0.05)
    assert r["real"] == pytest.approx(1.03 / 1.05 - 1)
    assert (1 + r["nominal"]) == pytest.approx((1 + r["real"]) * (1 + r["price"]))


def test_real_screen_outputs_state_the_base_and_show_problems(demo: Workspace):
    title, _fig, warn, growth, method = real.outputs(demo, "Apparel revenue",
                                                      "Chained consumer index", "2024", "auto",
                                                      False)
    assert "constant 2024 dollars" in title
    assert "preliminary" in str(warn.to_plotly_json())
    assert "Growth" in str(growth.to_plotly_json())
    assert "rebased" in str(method.to_plotly_json())
    # an impossible base is shown as a coded problem, not a crash
    title, _fig, warn, growth, method = real.outputs(demo, "Apparel revenue",
                                                     "Chained consumer index", "1999", "auto", False)
    assert title == "These figures cannot be computed" and "IX001" in str(warn.to_plotly_json())


def test_real_screen_seasonal_adjustment_on(demo: Workspace):
    title, _fig, _warn, _growth, method = real.outputs(demo, "Apparel revenue",
                                                     "Fixed-basket consumer index", "2024", "auto",
                                                     True)
    assert "seasonally adjusted" in title
    assert "Seasonal adjustment after deflation" in str(method.to_plotly_json())


def test_saved_choices_land_in_workspace_settings(demo: Workspace):
    ws = real.save_choices(demo, "Footwear revenue", "Chained consumer index", "2023", "A", True)
    assert ws.settings["series"] == "Footwear revenue" and ws.settings["seasonal_adjustment"] is True


# --------------------------------------------------------------------------- spread


def test_verdict_words():
    assert logic.verdict_text([0.01, 0.02, 0.03, 0.001, 0.2])[0].startswith(
        "Real growth is positive under all 5 deflators")
    assert logic.verdict_text([-0.01, -0.02])[0].startswith("Real growth is negative under all 2")
    text, tone = logic.verdict_text([0.01, -0.02, float("nan")])
    assert text.startswith("The sign depends on the deflator") and tone == "error"
    assert "cannot be computed" in logic.verdict_text([float("nan")])[0]


def test_spread_verdict_changes_with_the_deflators(small: Workspace):
    # Nominal +3 %; index A +2 % -> real +0.98 %; index B +5 % -> real -1.9 %.
    one = logic.spread(small, "Sales", ["Index A"], "2023", to="A")
    both = logic.spread(small, "Sales", ["Index A", "Index B"], "2023", to="A")
    assert one.verdict.startswith("Real growth is positive under the one deflator")
    assert both.verdict.startswith("The sign depends on the deflator")
    reals = {r["deflator"]: r["real"] for r in both.rows}
    assert reals["Index A"] == pytest.approx(1.03 / 1.02 - 1)
    assert reals["Index B"] == pytest.approx(1.03 / 1.05 - 1)
    assert {r["deflator"]: r["status"] for r in both.rows}["Index B"] == "preliminary"


def test_totals_are_offered_per_group_of_like_series(demo: Workspace):
    totals = [o for o in logic.series_options(demo) if o["value"].startswith(logic.TOTAL)]
    assert len(totals) == 2  # Harbourline's monthly segments, Tallmere's fiscal-year programs
    fy_total = next(o["value"] for o in totals if "fiscal" in o["label"])
    sp = logic.spread(demo, fy_total, ["Government consumption deflator"], "FY2025")
    assert sp.title.startswith("Total of 4 series in constant FY2025 dollars")


def test_spread_screen_outputs(demo: Workspace):
    verdict, title, fig, _growth, _warn, _method = spread.outputs(
        demo, "Rail operations", ["Fixed-basket consumer index", "Chained consumer index",
                                  "Government consumption deflator"], "FY2025", "auto", "cagr")
    assert "constant FY2025 dollars" in title
    assert "deflator" in str(verdict.to_plotly_json())
    band = [t for t in fig.data if getattr(t, "fill", None) == "tonexty"]
    assert band, "the band between the deflators is drawn"
    verdict, *_ = spread.outputs(demo, "Rail operations", [], "FY2025", "auto", "cagr")
    assert "Choose a series" in str(verdict.to_plotly_json())


# --------------------------------------------------------------------------- revisions


def test_revisions_screen_reports_what_moved(demo: Workspace):
    _opts, old, new = revisions.vintages_for(demo, "Chained consumer index")
    assert (old, new) == ("2026-04-15", "2026-10-15")
    rv = logic.revisions(demo, "Chained consumer index", old, new, "Apparel revenue", "2024")
    assert rv.comparison.revised > 0
    moved = pd.DataFrame(rv.moved)
    # the change shown is later minus earlier, period by period (pipeline.revisions)
    assert np.allclose(moved["real_change"], moved["real_new"] - moved["real_old"])
    summary, _fig, moved_table, _warn, _method = revisions.outputs(demo, "Chained consumer index", old,
                                                           new, "Apparel revenue", "2024")
    assert "moved" in str(summary.to_plotly_json())
    assert "2026-03" in str(moved_table.to_plotly_json())
    with pytest.raises(RealbasisError):
        logic.revisions(demo, "Chained consumer index", new, new, "Apparel revenue", "2024")


# --------------------------------------------------------------------------- shelf


def test_shelf_rows_show_vintages_and_stretches(demo: Workspace):
    rows = [r for r in logic.shelf_rows(demo) if r["name"] == "Chained consumer index"]
    assert {r["vintage"] for r in rows} == {"2026-10-15", "2026-04-15"}
    latest = next(r for r in rows if r["latest"] == "yes")
    assert latest["status"] == "preliminary 2025-11–2026-09"


def test_rebase_makes_the_base_average_100(small: Workspace):
    # I'(t) = 100 * I(t) / mean(I over the base period) (ILO/IMF CPI Manual 2004, ch. 9;
    # DESIGN.md): Index B averages 105 over 2024.
    ws, _lines = logic.rebase_index(small, "Index B", "2024")
    s = logic.pick_index(ws, "Index B (2024=100)")
    assert s.values["2024"].mean() == pytest.approx(100.0)
    assert s.values.iloc[0] == pytest.approx(100.0 * 100.0 / 105.0)
    assert "Index B" in ws.indexes  # the original is kept


def test_project_and_link_add_new_indexes(small: Workspace):
    ws, lines = logic.project_index(small, "Index A", 2.0, "2025-12")
    p = logic.pick_index(ws, "Index A projected at 2 % a year")
    assert p.values.index[-1] == pd.Period("2025-12", "M")
    assert p.status_or_final().iloc[-1] == "projected"
    # twelve projected months compound to the annual rate (pipeline.projection)
    assert p.values.iloc[-1] / p.values.iloc[-13] == pytest.approx(1.02)
    ws, lines = logic.link_indexes(small, "Index A", "Index B", "2024-12")
    assert "factor" in lines[0]
    with pytest.raises(RealbasisError):
        logic.project_index(small, "Index A", None, "2025")


def test_own_cost_index_from_components_and_weights(demo: Workspace):
    weights = str(demo.settings["cost_weights"])
    comps = ["Goods purchased", "Wages and benefits", "Rent and occupancy", "Freight and energy"]
    ws, lines = logic.build_cost_index(demo, "Harbourline costs", comps, weights, "fixed")
    s = logic.pick_index(ws, "Harbourline costs")
    assert s.kind == "index" and s.values.notna().sum() > 12
    assert any("Fixed weights" in line for line in lines)
    with pytest.raises(RealbasisError):
        logic.build_cost_index(demo, "x", comps[:1], weights, "fixed")


def test_shelf_action_saves_a_new_version(access: DataAccess, small: Workspace):
    ws = access.create("shelf test")
    ws = access.save(dataclasses.replace(ws, series=small.series, indexes=small.indexes),
                     action="setup")
    ref, message, _method = shelf.act(access, WorkspaceRef(ws.id, ws.version),
                                     lambda w: logic.rebase_index(w, "Index A", "2024"), "rebase")
    assert ref is not None and ref.version == ws.version + 1
    ref2, message, _ = shelf.act(access, WorkspaceRef(ws.id, ws.version),
                                 lambda w: logic.rebase_index(w, "Index A", "1990"), "rebase")
    assert ref2 is None and "IX001" in str(message.to_plotly_json())


# --------------------------------------------------------------------------- pieces


def test_numbers_have_thousands_separators_and_units():
    assert components.fmt_number(1234567.891) == "1,234,567.9"
    assert components.fmt_number(float("nan")) == "–"
    assert components.fmt_percent(0.0234) == "+2.3 %"
    assert components.fmt_percent(-0.00001) == "+0.0 %"
    assert components.fmt_number(-0.04) == "0.0"  # no negative zero
    assert components.fmt_number(None) == "–" and components.fmt_percent(None) == "–"
    assert components.fmt_number("n/a") == "n/a"
    t = components.table([components.Column("v", "Value (USD)", "number", 0)], [{"v": 12345}])
    assert "12,345" in str(t.to_plotly_json())


def test_user_text_stays_text():
    evil = "<img src=x onerror=alert(1)>"
    t = components.table([components.Column("name", "Series")], [{"name": evil}])
    cell = t.children[1].children[0].children[0]
    assert cell.children == evil  # a text child: React escapes it
    root = Path(components.__file__).parent
    for path in root.rglob("*.py"):
        text = path.read_text()
        assert "dangerously" not in text and "dcc.Markdown" not in text, path


def test_palette_is_okabe_ito():
    # Okabe & Ito (2008), "Color Universal Design (CUD): how to make figures and
    # presentations that are friendly to colorblind people", the eight colours.
    assert set(figures.OKABE_ITO) == {"#000000", "#E69F00", "#56B4E9", "#009E73", "#F0E442",
                                      "#0072B2", "#D55E00", "#CC79A7"}
    assert set(figures.LINE_COLOURS) <= set(figures.OKABE_ITO)


def test_figures_shade_preliminary_and_dash_projected():
    frame = pd.DataFrame({"period": ["2024", "2025", "2026", "2027"],
                          "nominal": [1.0, 2.0, 3.0, 4.0], "real": [1.0, 1.5, 2.0, 2.5],
                          "status": ["final", "preliminary", "projected", "projected"]})
    fig = figures.real_terms_figure(frame, title="t", unit="USD", real_label="Real")
    dashed = [t for t in fig.data if t.name.endswith("(projected)")]
    assert dashed and all(t.line.dash == "dash" for t in dashed)
    # the dashed part starts at the last measured point so the line is continuous
    assert dashed[-1].y[:2] == (None, 1.5)
    shapes = fig.layout.shapes
    assert [(s.x0, s.x1) for s in shapes] == [(0.5, 1.5), (1.5, 3.5)]


def test_screens_are_discovered_in_order():
    keys = [s.key for s in discover()]
    assert keys[:5] == ["intake", "shelf", "real", "spread", "revisions"]


# --------------------------------------------------------------------------- data access


def test_demo_workspace_is_built_once(tmp_path: Path):
    a = DataAccess(Settings(data_dir=str(tmp_path)))
    b = DataAccess(Settings(data_dir=str(tmp_path)))
    ra, rb_ = a.demo_ref(), b.demo_ref()
    assert ra.id == rb_.id
    assert sum(1 for w in a.store.list() if w.name == DEMO_NAME) == 1
    ws = a.load(ra)
    assert "ILLUSTRATIVE" in ws.notes and "Harbourline" in ws.notes


def test_cache_is_keyed_by_id_and_version(access: DataAccess):
    ws = access.create("cache")
    ref = WorkspaceRef(ws.id, ws.version)
    assert access.load(ref) is access.load(ref)
    saved = access.save(dataclasses.replace(ws, notes="changed"), action="note")
    assert access.load(WorkspaceRef(ws.id, 0)).notes == "changed"
    assert access.load(ref).notes == ""  # the old version is still the old version
    assert saved.version == ws.version + 1


def test_kept_uploads_are_shared_files_with_checked_ids(access: DataAccess):
    uid = access.keep_upload(b"abc", "a.csv")
    assert access.upload(uid) == (b"abc", "a.csv")
    for bad in ("../../etc/passwd", "0" * 64, 5):
        with pytest.raises(RealbasisError) as err:
            access.upload(bad)  # type: ignore[arg-type]
        assert err.value.code == "UI003"


def test_secret_key_is_generated_once_and_shared(tmp_path: Path):
    from dashboard.jobs import secret_key

    s = Settings(data_dir=str(tmp_path))
    assert secret_key(s) == secret_key(s) and len(secret_key(s)) > 40
    assert secret_key(s.replace(secret_key="fixed")) == "fixed"


def test_changes_to_the_shared_demo_go_to_a_copy(access: DataAccess):
    ref = access.demo_ref()
    demo = access.load(ref)
    saved = access.save(real.save_choices(demo, "Footwear revenue", "Chained consumer index",
                                          "2023", "auto", False), action="choices")
    assert saved.id != ref.id and saved.name.startswith("My copy of the demo")
    assert saved.settings["series"] == "Footwear revenue" and saved.series.keys() == demo.series.keys()
    assert access.load(WorkspaceRef(ref.id, 0)).version == ref.version


def test_batch_seasonal_adjustment_adds_adjusted_series(access: DataAccess, demo: Workspace):
    ws = access.create("batch")
    ws = access.save(dataclasses.replace(ws, series=demo.series, indexes=demo.indexes),
                     action="setup")
    steps: list[tuple[int, int]] = []
    ref, message = real.adjust_all(access, WorkspaceRef(ws.id, ws.version), "stl",
                                   lambda a, b: steps.append((a, b)))
    assert ref is not None and steps[-1] == (4, 4)  # the four monthly Harbourline series
    new = access.load(ref)
    adjusted = [n for n in new.series if n.endswith("(seasonally adjusted)")]
    assert len(adjusted) == 4 and "Bus operations (seasonally adjusted)" not in new.series
    assert "STL" in str(message.to_plotly_json())
    # fiscal-year series only: nothing to adjust, said plainly
    only_fy = dataclasses.replace(demo, series={"Bus operations": demo.series["Bus operations"]})
    with pytest.raises(RealbasisError) as err:
        logic.adjust_all(only_fy, "stl")
    assert "never seasonally adjusted" in str(err.value)


def test_address_keeps_other_parameters():
    from dashboard.app import address_for

    assert address_for("?review=abc", WorkspaceRef("w9", 2)) == "?review=abc&ws=w9"
    from dash import no_update

    assert address_for("?ws=w9", WorkspaceRef("w9", 3)) is no_update


def test_without_the_demo_the_latest_workspace_opens(tmp_path: Path):
    from dashboard.app import default_resolver

    data = DataAccess(Settings(data_dir=str(tmp_path), demo=False))
    resolve = default_resolver(data)
    first = resolve("")
    assert data.load(first).name == "My workspace"
    assert resolve("") == first  # not a new one each time
    other = data.create("Budget FY2026")
    assert resolve(f"?ws={other.id}").id == other.id
    assert resolve("?ws=unknown").id in {first.id, other.id}
    assert not any(w.name == DEMO_NAME for w in data.store.list())


def test_base_follows_the_series_when_it_does_not_fit(demo: Workspace):
    # A calendar year is not whole fiscal years (July start): the fiscal series gets its
    # own last actual (final) fiscal year, not a proposed out-year.
    assert logic.base_after_series_change(demo, "Bus operations", "2024") == "FY2026"
    assert logic.base_after_series_change(demo, "Bus operations", "FY2025") is None
    assert logic.base_after_series_change(demo, "Apparel revenue", "2024") is None
    assert logic.base_after_series_change(demo, "Apparel revenue", "nonsense") == "2025"


def test_intake_says_how_the_file_was_read(access: DataAccess):
    pending, _ = intake.receive(access, _data_url(b"period;Sales\n2024-01;1,5\n2024-02;2,5\n"),
                                "semi.csv")
    summary = str(intake.interpret(access, pending, 0, {})[0].to_plotly_json())
    assert "semicolon-separated" in summary and "comma (1.234,5)" in summary


def test_spread_band_runs_from_the_lowest_to_the_highest_real_value():
    table = pd.DataFrame({
        "series": "S", "deflator": ["A", "A", "B", "B", "C", "C"],
        "period": ["2024", "2025"] * 3, "nominal": [100.0, 110.0] * 3,
        "real": [100.0, 104.0, 100.0, 99.0, 100.0, 107.0],
        "status": ["final", "final", "final", "preliminary", "final", "final"]})
    fig = figures.spread_figure(table, title="", unit="USD")
    low, high = fig.data[0], fig.data[1]
    assert list(low.y) == [100.0, 99.0] and list(high.y) == [100.0, 107.0]
    assert high.fill == "tonexty"
    # each deflator has its own colour AND dash pattern (not colour alone)
    lines = [t for t in fig.data if t.name in ("A", "B", "C")]
    assert len({t.line.dash for t in lines}) == 3 and len({t.line.color for t in lines}) == 3
    # the worst status of a period across deflators is shaded
    assert [(s.x0, s.x1) for s in fig.layout.shapes] == [(0.5, 1.5)]


# the dashboard's preview still reads workbooks with pandas.read_excel, which warns about
# its future default engine now that python-calamine (the intake's workbook reader) is
# installed; the preview moves to pipeline.ingest.preview with the dashboard's next change
@pytest.mark.filterwarnings("ignore:The default engine for reading 'xlsx' files")
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
    pending, _ = intake.receive(access2, contents, "book.xlsx")
    out = intake.interpret(access2, pending, 0, {}, sheet="Revenue")
    assert out[4] == [{"label": "Stores revenue", "value": "Stores revenue"}]
    assert {"label": "Revenue", "value": "Revenue"} in out[6]
    assert "sheet 'Revenue'" in str(out[0].to_plotly_json())


def test_fiscal_labels_without_a_start_month_say_where_to_choose_it(tmp_path: Path,
                                                                    demo_dir: Path):
    data = DataAccess(Settings(data_dir=str(tmp_path)))
    raw = (demo_dir / "tallmere_program_spending.csv").read_bytes()
    pending, _ = intake.receive(data, "data:text/csv;base64," + base64.b64encode(raw).decode(),
                                "tallmere.csv")
    out = intake.interpret(data, pending, 0, {})
    assert "PE102" in str(out[2].to_plotly_json())
    assert "Choose the month the fiscal year starts in" in str(out[0].to_plotly_json())
    ok = intake.interpret(data, pending, 7, {})
    assert ok[5] is False and len(ok[4]) == 4  # four programs, nothing blocks adding


# --------------------------------------------------------------------------- polish (H9)


def test_reading_clears_the_received_banner_but_keeps_a_refusal(access: DataAccess):
    csv = b"period,Sales (USD thousands)\n2024-01,10\n2024-02,11\n"
    pending, status = intake.receive(access, _data_url(csv), "sales.csv")
    assert "Reading it" in str(status.to_plotly_json())
    # once read, the "Received ... Reading it…" line goes: the summary is the outcome
    assert intake.status_after_reading(pending) is None
    # a refused file leaves no pending upload: its message must stay
    refused, message = intake.receive(access, _data_url(b"y" * 3000), "big.csv")
    assert refused is None and "UI001" in str(message.to_plotly_json())
    assert intake.status_after_reading(refused) is intake.no_update


def test_added_message_follows_the_workspace_version(access: DataAccess):
    ws = access.create("mine")
    pending, _ = intake.receive(access, _data_url(b"period,Sales (USD)\n2024-01,1\n2024-02,2\n"),
                                "s.csv")
    new_ref, message, summary = intake.add_with_summary(
        access, WorkspaceRef(ws.id, ws.version), pending, 0, {})
    assert new_ref is not None and new_ref.version == 2
    assert "now at version 2" in str(message.to_plotly_json())
    added_at = {**new_ref.as_dict(), "summary": summary}
    # the header shows the same version: nothing to restate
    assert intake.confirmation_after_change(added_at, new_ref) is intake.no_update
    # another screen saves version 3: the message must not go on saying "version 2" alone
    later = access.save(access.load(new_ref), action="rebase")
    text = str(intake.confirmation_after_change(
        added_at, WorkspaceRef(later.id, later.version)).to_plotly_json())
    assert "now at version 3" in text and "added as version 2" in text and summary in text
    # another workspace opened: the confirmation is about a workspace no longer shown
    other = access.create("other")
    assert intake.confirmation_after_change(added_at, WorkspaceRef(other.id, 1)) is None


def test_workspace_contents_lists_series_and_the_files_added(access: DataAccess):
    ws = access.create("mine")
    csv = b"period,Sales (USD thousands),Price index\n2024-01,1,100\n2024-02,2,101\n"
    pending, _ = intake.receive(access, _data_url(csv), "sales.csv")
    new_ref, _ = intake.add(access, WorkspaceRef(ws.id, ws.version), pending, 0,
                            {"Price index": "index"})
    assert new_ref is not None
    series, uploads = intake.workspace_contents(access, new_ref)
    text = str(series.to_plotly_json())
    for word in ("Sales", "Price index", "USD thousands", "monthly", "2024-01 – 2024-02",
                 "all final", "flow", "index"):
        assert word in text, word
    up = str(uploads.to_plotly_json())
    assert "sales.csv" in up and f"{len(csv):,}" in up and "editor" in up
    rows = intake.upload_rows(access.store.audit(new_ref.id))
    assert [(r["filename"], r["version"]) for r in rows] == [("sales.csv", "2")]
    # an empty workspace says so
    empty = access.create("empty")
    series, uploads = intake.workspace_contents(access, WorkspaceRef(empty.id, 1))
    assert "no series yet" in str(series.to_plotly_json())
    assert "No file has been added" in str(uploads.to_plotly_json())


def test_upload_limit_message_names_the_limit():
    err = logic.too_large(None, 50 * 1024 * 1024)
    p = err.problems[0]
    assert p.code == "UI001" and "50.0 MB" in p.message and "52,428,800" in p.expected
    assert "REALBASIS_MAX_UPLOAD_BYTES" in p.fix


def test_real_terms_say_which_out_years_the_deflator_does_not_reach(demo: Workspace):
    """Tallmere's budget runs to FY2030 (FY2027 on projected); the monthly consumer index
    ends 2026-09, so those years cannot be deflated by it (common practice: no real value
    without an index value). The screen says so and names deflators that do reach them."""
    c = logic.compute_real(demo, "Rail operations", "Chained consumer index", None)
    assert c.dollars_label == "constant FY2026 dollars"
    assert c.left_out is not None
    assert c.left_out.startswith("FY2027–FY2030 (projected values) of Rail operations")
    assert "Government consumption deflator" in c.left_out
    assert "Chained consumer index" not in c.left_out.split("(", 2)[2]  # not offered itself
    shown = real.outputs(demo, "Rail operations", "Chained consumer index", None, "auto", False)
    assert "FY2027–FY2030" in str(shown[2].to_plotly_json())
    # a deflator that reaches FY2030: nothing left out, the out-years are projected
    g = logic.compute_real(demo, "Rail operations", "Government consumption deflator", None)
    assert g.left_out is None
    assert list(g.frame["period"])[-4:] == ["FY2027", "FY2028", "FY2029", "FY2030"]
    assert set(g.frame["status"].iloc[-4:]) == {"projected"}
    fig = real.outputs(demo, "Rail operations", "Government consumption deflator", None,
                       "auto", False)[1]
    dashed = [t for t in fig.data if t.name.endswith("(projected)")]
    assert dashed and all(t.line.dash == "dash" for t in dashed)


def test_index_pickers_name_the_vintage_used_when_several_are_held(demo: Workspace):
    # The demo holds two vintages of the chained consumer index; pickers act on the latest,
    # and the label must say which one (common practice: state the vintage used).
    opts = {o["value"]: o["label"] for o in logic.index_options(demo)}
    assert opts["Chained consumer index"] == (
        "Chained consumer index (latest vintage, 2026-10-15)")
    assert opts["Fixed-basket consumer index"] == "Fixed-basket consumer index"
    items = logic.figure_items(demo, ["Chained consumer index"])
    assert items[0]["name"] == "Chained consumer index (latest vintage, 2026-10-15)"
