"""The dashboard in a real browser: Chromium driven by Playwright against gunicorn with two
workers (started here as a subprocess, with its own data folder), as in production.

Skips with the reason where no Chromium is found; CI makes it mandatory
(RB_REQUIRE_BROWSER=1, see tests/conftest.py).
"""

from __future__ import annotations

import os
import re
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pandas as pd
import pytest
from conftest import ROOT

pytestmark = [pytest.mark.browser, pytest.mark.slow]

EVIL = "<img src=x onerror=alert(1)>"
UPLOAD_LIMIT = 200_000  # small, so a file over it is quick to make (195.3 kB)
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@pytest.fixture(scope="module")
def server(tmp_path_factory: pytest.TempPathFactory, chromium_path: str) -> Iterator[str]:
    """The address of a gunicorn server; on teardown its log must hold no traceback
    (a server-side error is a failure even when the page looked fine)."""
    data = tmp_path_factory.mktemp("browser-data")
    port = _free_port()
    env = {**os.environ, "REALBASIS_DATA_DIR": str(data), "REALBASIS_WORKERS": "2",
           "REALBASIS_MAX_UPLOAD_BYTES": str(UPLOAD_LIMIT), "REALBASIS_LOCAL_EDITING": "1"}
    env.pop("REALBASIS_DATABASE_URL", None)
    env.pop("REALBASIS_REDIS_URL", None)
    log = open(data / "gunicorn.log", "wb")  # noqa: SIM115 - closed below
    proc = subprocess.Popen(
        [sys.executable, "-m", "gunicorn", "--no-control-socket", "-w", "2",
         "-b", f"127.0.0.1:{port}", "--timeout", "120", "dashboard.wsgi:server"],
        cwd=ROOT, env=env, stdout=log, stderr=subprocess.STDOUT, start_new_session=True)
    url = f"http://127.0.0.1:{port}/"
    try:
        deadline = time.monotonic() + 90
        while True:
            try:
                with urllib.request.urlopen(url, timeout=5) as r:
                    if r.status == 200:
                        break
            except OSError:
                pass
            if proc.poll() is not None or time.monotonic() > deadline:
                log.flush()
                pytest.fail("gunicorn did not start:\n"
                            + (data / "gunicorn.log").read_text(errors="replace")[-3000:])
            time.sleep(0.3)
        yield url
        log.flush()
        text = (data / "gunicorn.log").read_text(errors="replace")
        assert "Traceback" not in text, text[-4000:]
    finally:
        os.killpg(proc.pid, signal.SIGTERM)
        try:
            proc.wait(20)
        except subprocess.TimeoutExpired:
            os.killpg(proc.pid, signal.SIGKILL)
        log.close()


@pytest.fixture(scope="module")
def browser(chromium_path: str) -> Iterator[Any]:
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=chromium_path, args=CHROMIUM_ARGS)
        yield b
        b.close()


def _upload_file(folder: Path) -> Path:
    """A wide monthly file: one money series, two price indexes, and a series whose name
    is an HTML injection attempt. Nominal +3 % in 2024; the low index +1 %, the high +6 %."""
    rows = [f"period,Widgets revenue (USD thousands),Low price index,High price index,{EVIL} (USD)"]
    for p in pd.period_range("2022-01", "2024-12", freq="M"):
        w = {2022: 90, 2023: 100, 2024: 103}[p.year]
        lo = {2022: 98, 2023: 100, 2024: 101}[p.year]
        hi = {2022: 97, 2023: 100, 2024: 106}[p.year]
        rows.append(f"{p.year}-{p.month:02d},{w},{lo},{hi},{p.month}")
    path = folder / "widgets.csv"
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def _choose(page: Any, dropdown_id: str, values: list[str], *, multi: bool = False) -> None:
    """Set a dcc.Dropdown to exactly ``values`` (option values equal to their label's
    leading text) through its popover: clear a multi-select with its Select/Deselect All
    buttons, then search each value and click it (the option list is virtualised)."""
    page.locator(f"#{dropdown_id}").click()
    content = page.locator(".dash-dropdown-content[data-state=open]")
    content.wait_for()
    if multi:
        select_all = content.get_by_role("button", name="Select All", exact=True)
        if select_all.count():
            select_all.click()
        content.get_by_role("button", name="Deselect All", exact=True).click()
        content.locator("[role=option][aria-selected=true]").first.wait_for(state="detached")
    search = content.locator("input.dash-dropdown-search")
    for value in values:
        search.fill(value)
        option = content.locator(f"[role=option]:has(input[value='{value}'])")
        option.first.click()
        if not multi:
            break
    if content.count():
        page.keyboard.press("Escape")
    content.wait_for(state="detached")


def _quiet(page: Any, timeout: float = 120_000) -> None:
    """Wait until no Dash callback is loading (twice, a moment apart: callbacks come in
    chains), so a screenshot is not taken while every screen recomputes."""
    for _ in range(2):
        page.wait_for_load_state("networkidle")
        page.wait_for_function("document.querySelectorAll('[data-dash-is-loading=\"true\"]')"
                               ".length === 0", timeout=timeout)
        page.wait_for_timeout(400)


def _shot(page: Any, folder: Path, name: str) -> None:
    # A full-page screenshot waits for a fresh frame; on a loaded machine, while the
    # callbacks of every screen answer a workspace change, that can take longer than
    # playwright's 30 s default (timing here is never asserted).
    _quiet(page)
    page.screenshot(path=str(folder / f"dashboard-{name}.png"), full_page=True,
                    timeout=120_000)


def test_upload_deflate_and_compare_in_a_real_browser(server: str, browser: Any,
                                                      tmp_path: Path, output_dir: Path):
    page = browser.new_page(viewport={"width": 1300, "height": 1000})
    problems: list[str] = []
    dialogs: list[str] = []
    page.on("console", lambda m: problems.append(f"console {m.type}: {m.text}")
            if m.type == "error" else None)
    page.on("pageerror", lambda e: problems.append(f"page error: {e}"))
    page.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))

    page.goto(server)
    page.wait_for_selector("#rb-workspace-label strong", timeout=60_000)
    assert "Demo" in page.inner_text("#rb-workspace-label")
    # only the screen shown computes: Real terms is empty until it is opened
    assert page.locator("#rt-title").count() == 0 or not page.inner_text("#rt-title").strip()
    page.click("#rb-nav-real")
    page.wait_for_function("document.querySelector('#rt-title') && "
                           "document.querySelector('#rt-title').innerText.includes('constant')")
    for key in ("intake", "shelf", "real", "spread", "revisions"):
        page.click(f"#rb-nav-{key}")
        page.wait_for_selector(f"#rb-screen-{key}:not([hidden])")
        _shot(page, output_dir, f"demo-{key}")

    # --- intake: drop a file, see what was found, add it
    page.click("#rb-nav-intake")
    page.set_input_files("#in-upload input[type=file]", str(_upload_file(tmp_path)))
    page.wait_for_selector("#in-series-table table", timeout=60_000)
    table_text = page.inner_text("#in-series-table")
    assert "Widgets revenue" in table_text and "Low price index" in table_text
    assert EVIL in table_text, "the hostile series name is shown as text"
    assert page.locator("img[src='x']").count() == 0
    # once read, the "Received ... Reading it…" line gives way to the outcome
    page.wait_for_function("document.querySelector('#in-status').innerText.trim() === ''",
                           timeout=30_000)
    assert "series found in widgets.csv" in page.inner_text("#in-summary")
    _shot(page, output_dir, "intake-file-read")
    page.click("#in-add")
    page.wait_for_function("document.querySelector('#in-added').innerText.includes('Added')",
                           timeout=30_000)
    page.wait_for_function("document.querySelector('#rb-workspace-label').innerText"
                           ".includes('From widgets.csv')")
    assert "version 2" in page.inner_text("#rb-workspace-label")
    assert "now at version 2" in page.inner_text("#in-added")
    # the workspace's own list shows what was added, and the upload from the audit trail
    page.wait_for_function("document.querySelector('#in-uploads').innerText"
                           ".includes('widgets.csv')", timeout=30_000)
    assert "Widgets revenue" in page.inner_text("#in-ws-series")

    # --- real terms: choose the series, the deflator and the base
    page.click("#rb-nav-real")
    page.wait_for_selector("#rb-screen-real:not([hidden])")
    _choose(page, "rt-series", ["Widgets revenue"])
    _choose(page, "rt-deflator", ["Low price index"])
    page.fill("#rt-base", "2023")
    page.press("#rt-base", "Enter")
    page.wait_for_function("document.querySelector('#rt-title').innerText.includes("
                           "'constant 2023 dollars') && document.querySelector('#rt-title')"
                           ".innerText.includes('Low price index')", timeout=30_000)
    growth = page.inner_text("#rt-growth")
    assert "+1.98 %" in growth  # (1.03 / 1.01) - 1, the exact split
    _shot(page, output_dir, "real-terms-upload")
    page.fill("#rt-base", "2024")
    page.press("#rt-base", "Enter")
    page.wait_for_function("document.querySelector('#rt-title').innerText.includes("
                           "'constant 2024 dollars')", timeout=30_000)

    # --- spread: one deflator, then two; the verdict changes
    page.click("#rb-nav-spread")
    page.wait_for_selector("#rb-screen-spread:not([hidden])")
    _choose(page, "sp-series", ["Widgets revenue"])
    _choose(page, "sp-deflators", ["Low price index"], multi=True)
    page.wait_for_function("document.querySelector('#sp-verdict').innerText.includes("
                           "'positive under the one deflator')", timeout=30_000)
    _choose(page, "sp-deflators", ["Low price index", "High price index"], multi=True)
    page.wait_for_function("document.querySelector('#sp-verdict').innerText.includes("
                           "'The sign depends on the deflator')", timeout=30_000)
    assert re.search(r"positive under 1 and negative under 1 of 2", page.inner_text("#sp-verdict"))
    _shot(page, output_dir, "spread-upload")

    # --- shelf: rebase an index; a new one joins the shelf, the original stays
    page.click("#rb-nav-shelf")
    page.wait_for_selector("#rb-screen-shelf:not([hidden])")
    _choose(page, "sh-target", ["Low price index"])
    page.fill("#sh-rebase-base", "2024")
    page.click("#sh-rebase")
    page.wait_for_function("document.querySelector('#sh-table').innerText.includes("
                           "'Low price index (2024=100)')", timeout=30_000)
    assert "Saved as version 3" in page.inner_text("#sh-message")
    # back on the intake, the "Added" message agrees with the header (version 3 now)
    page.click("#rb-nav-intake")
    page.wait_for_function("document.querySelector('#in-added').innerText"
                           ".includes('now at version 3')", timeout=30_000)
    assert "version 3" in page.inner_text("#rb-workspace-label")
    assert "added as version 2" in page.inner_text("#in-added")

    # --- every screen of the new workspace
    for key in ("intake", "shelf", "real", "spread", "revisions"):
        page.click(f"#rb-nav-{key}")
        page.wait_for_selector(f"#rb-screen-{key}:not([hidden])")
        assert page.locator(f"#rb-screen-{key} .rb-cautions").count() == 1
        _shot(page, output_dir, f"upload-{key}")

    assert dialogs == [], f"a script ran: {dialogs}"
    assert problems == [], "\n".join(problems)
    page.close()


def test_controls_are_reachable_by_keyboard(server: str, browser: Any):
    page = browser.new_page(viewport={"width": 1300, "height": 900})
    page.goto(server)
    page.wait_for_selector("#rb-workspace-label strong", timeout=60_000)
    page.focus("#rb-nav-intake")
    for _ in range(2):  # intake -> shelf -> real
        page.keyboard.press("Tab")
    page.keyboard.press("Enter")
    page.wait_for_selector("#rb-screen-real:not([hidden])")
    seen = []
    for _ in range(9):  # the other screens' buttons, series, deflator, its switch, base
        page.keyboard.press("Tab")
        seen.append(page.evaluate("document.activeElement.id || "
                                  "document.activeElement.closest('[id]').id"))
    assert "rt-base" in seen
    # the file drop area takes the keyboard too (its file input is focusable)
    page.click("#rb-nav-intake")
    page.focus("#in-new-workspace")
    page.keyboard.press("Tab")
    assert page.evaluate("document.activeElement.closest('#in-upload') !== null")
    page.close()


def test_background_adjustment_of_every_series(server: str, browser: Any, output_dir: Path):
    """A long job runs as a background callback (diskcache shared by both workers) with a
    progress bar; the shared demo is not changed: the result goes to a copy."""
    page = browser.new_page(viewport={"width": 1300, "height": 1000})
    problems: list[str] = []
    page.on("console", lambda m: problems.append(m.text) if m.type == "error" else None)
    page.goto(server)
    page.wait_for_selector("#rb-workspace-label strong", timeout=60_000)
    page.click("#rb-nav-real")
    page.click("#rb-screen-real details:has(#rt-sa-all) > summary")
    page.click("#rt-sa-all")
    page.wait_for_function("document.querySelector('#rt-sa-message').innerText.includes("
                           "'seasonally adjusted series')", timeout=120_000)
    page.wait_for_function("document.querySelector('#rb-workspace-label').innerText"
                           ".includes('My copy of the demo')", timeout=30_000)
    page.wait_for_function("window.location.search.includes('ws=')", timeout=30_000)
    _shot(page, output_dir, "real-terms-adjusted-all")
    assert problems == [], "\n".join(problems)
    page.close()


def test_a_background_job_can_be_cancelled(server: str, browser: Any, output_dir: Path):
    """Adjusting every series (X-13ARIMA-SEATS, about 2 s on the demo) shows its progress
    bar and a Cancel button; Cancel stops the job: nothing is saved, the page stays on the
    shared demo and the controls come back."""
    page = browser.new_page(viewport={"width": 1300, "height": 1000})
    page.goto(server)
    page.wait_for_selector("#rb-workspace-label strong", timeout=60_000)
    _quiet(page)
    page.click("#rb-nav-real")
    page.click("#rb-screen-real details:has(#rt-sa-all) > summary")
    _pick(page, page.locator("#rt-sa-method"), "X-13", "x13")
    page.click("#rt-sa-all")
    page.wait_for_selector("#rt-sa-cancel:not([hidden])", timeout=30_000)
    assert page.evaluate("getComputedStyle(document.getElementById('rt-sa-progress'))"
                         ".visibility") == "visible"
    page.click("#rt-sa-cancel")
    page.wait_for_selector("#rt-sa-cancel[hidden]", state="attached", timeout=30_000)
    page.wait_for_selector("#rt-sa-all:not([disabled])", timeout=30_000)
    page.wait_for_timeout(4000)  # longer than the job would have taken
    assert "seasonally adjusted series" not in page.inner_text("#rt-sa-message")
    assert "My copy of the demo" not in page.inner_text("#rb-workspace-label")
    assert page.evaluate("getComputedStyle(document.getElementById('rt-sa-progress'))"
                         ".visibility") == "hidden"
    _shot(page, output_dir, "real-terms-adjusting-cancelled")  # waits for the page to settle
    page.close()


def test_a_file_over_the_limit_is_refused_before_it_is_sent(server: str, browser: Any,
                                                           tmp_path: Path, output_dir: Path):
    """A file bigger than the upload limit never leaves the browser (Flask would cut the
    request off before any callback could answer): the user is told at once, with the
    limit named; a file under the limit still goes through."""
    page = browser.new_page(viewport={"width": 1300, "height": 1000})
    posts: list[int] = []
    page.on("request", lambda r: posts.append(len(r.post_data_buffer or b""))
            if r.method == "POST" else None)
    page.goto(server)
    page.wait_for_selector("#rb-workspace-label strong", timeout=60_000)
    big = tmp_path / "big.csv"
    big.write_text("period,Sales (USD)\n" + "2024-01,1\n" * 30_000, encoding="utf-8")
    assert big.stat().st_size > UPLOAD_LIMIT
    page.set_input_files("#in-upload input[type=file]", str(big))
    page.wait_for_function("document.querySelector('#in-status').innerText.includes('UI001')",
                           timeout=30_000)
    status = page.inner_text("#in-status")
    assert "big.csv" in status and "195.3 kB" in status and "Nothing was sent" in status
    page.wait_for_load_state("networkidle")
    assert max(posts, default=0) < UPLOAD_LIMIT, "the big file was sent"
    _shot(page, output_dir, "intake-file-too-big")
    page.set_input_files("#in-upload input[type=file]", str(_upload_file(tmp_path)))
    page.wait_for_selector("#in-series-table table", timeout=60_000)
    page.wait_for_function("document.querySelector('#in-status').innerText.trim() === ''",
                           timeout=30_000)
    page.close()


def test_fiscal_budget_in_real_terms_and_whole_labels(server: str, browser: Any,
                                                      output_dir: Path):
    """Tallmere's July–June budget: constant FY dollars in the title; the consumer index
    stops before the out-years and the screen says so; a deflator that reaches FY2030
    shows them dashed. Chosen options are shown whole, never cut off."""
    page = browser.new_page(viewport={"width": 1300, "height": 1000})
    page.goto(server + "#real")
    page.wait_for_selector("#rb-workspace-label strong", timeout=60_000)
    page.click("#rb-nav-real")
    page.wait_for_function("document.querySelector('#rt-title').innerText.includes('constant')",
                           timeout=60_000)
    _choose(page, "rt-series", ["Rail operations"])
    _choose(page, "rt-deflator", ["Chained consumer index"])
    page.wait_for_function("document.querySelector('#rt-title').innerText.includes("
                           "'Rail operations in constant FY2026 dollars')", timeout=30_000)
    page.wait_for_function("document.querySelector('#rt-warnings').innerText.includes("
                           "'FY2027–FY2030 (projected values) of Rail operations are not shown')",
                           timeout=30_000)
    _choose(page, "rt-deflator", ["Government consumption deflator"])
    page.wait_for_function("document.querySelector('#rt-title').innerText.includes("
                           "'Government consumption deflator')", timeout=30_000)
    page.wait_for_function(
        "(() => { const g = document.querySelector('#rt-figure .js-plotly-plot');"
        " return g && g.data.some(t => t.name.endsWith('(projected)') && t.line.dash === 'dash'"
        " && t.x.includes('FY2030')); })()", timeout=30_000)
    assert "FY2026 dollars" in page.inner_text("#rt-title")
    _shot(page, output_dir, "real-terms-fiscal-budget")
    cut = page.evaluate("Array.from(document.querySelectorAll('#rb-screen-real "
                        ".dash-dropdown-value')).filter(e => e.scrollWidth > e.clientWidth + 1)"
                        ".map(e => e.innerText)")
    assert cut == [], f"labels cut off: {cut}"
    assert "Rail operations (USD thousands, fiscal years starting July)" in \
        page.inner_text("#rt-series")
    page.close()


def _part_shot(page: Any, selector: str, folder: Path, name: str) -> None:
    """A screenshot of one part of the page at full size (easier to look at closely)."""
    page.wait_for_timeout(300)
    page.locator(selector).screenshot(path=str(folder / f"dashboard-{name}.png"))


def _pick(page: Any, control: Any, search: str, value: str) -> None:
    """Open a dcc.Dropdown (a locator), search ``search`` and click the option whose value
    is ``value`` (values need not match the labels)."""
    control.click()
    content = page.locator(".dash-dropdown-content[data-state=open]")
    content.wait_for()
    content.locator("input.dash-dropdown-search").fill(search)
    content.locator(f"[role=option]:has(input[value='{value}'])").first.click()
    if content.count():
        page.keyboard.press("Escape")
    content.wait_for(state="detached")


def _pair(page: Any, part: str) -> Any:
    import json

    dom_id = json.dumps({"part": part, "type": "rt-pair"}, sort_keys=True,
                        separators=(",", ":"))
    return page.locator(f"[id='{dom_id}']")


def test_total_of_parts_contributions_workbook_and_revision_band(server: str, browser: Any,
                                                                 tmp_path: Path,
                                                                 output_dir: Path):
    """Harbourline's four segments (illustrative demo), each by its own deflator, chained
    Fisher: the residual line and the contributions chart; saved, the audit workbook from
    Share and export holds the Contributions sheet; the revision band of the chained
    consumer index (four demo vintages) on Revisions and on Real terms."""
    import openpyxl

    page = browser.new_page(viewport={"width": 1300, "height": 1000})
    problems: list[str] = []
    page.on("console", lambda m: problems.append(f"console {m.type}: {m.text}")
            if m.type == "error" else None)
    page.on("pageerror", lambda e: problems.append(f"page error: {e}"))
    page.goto(server)
    page.wait_for_selector("#rb-workspace-label strong", timeout=60_000)
    page.click("#rb-nav-real")
    page.wait_for_function("document.querySelector('#rt-title').innerText.includes('constant')",
                           timeout=60_000)

    # --- the total of parts, each by its own deflator
    _pick(page, page.locator("#rt-series"), "Total of parts", "__parts__|Apparel revenue")
    page.wait_for_selector("#rt-parts-box:not([hidden])", timeout=30_000)
    assert page.locator("#rt-deflator-box").is_hidden()
    pairs = {"Apparel revenue": "Producer index for apparel and outdoor goods",
             "Footwear revenue": "Chained consumer index",
             "Outdoor gear revenue": "Producer index for apparel and outdoor goods",
             "Home goods revenue": "Fixed-basket consumer index"}
    for part, deflator in pairs.items():
        _pair(page, part).wait_for(timeout=30_000)
        _pick(page, _pair(page, part), deflator, deflator)
    page.check("#rt-chain input[value='fisher']")
    page.wait_for_function(
        "document.querySelector('#rt-title').innerText.includes('chained 2024 dollars') && "
        "document.querySelector('#rt-warnings').innerText.includes("
        "'Home goods revenue by Fixed-basket consumer index')", timeout=30_000)
    page.wait_for_function(
        "(() => { const g = document.querySelector('#rt-figure .js-plotly-plot');"
        " return g && g.data.some(t => t.name.startsWith('Residual') &&"
        " t.y.some(v => v !== null && Math.abs(v) > 0)); })()", timeout=30_000)
    page.wait_for_function(
        "(() => { const g = document.querySelector('#rt-contrib-figure .js-plotly-plot');"
        " return g && g.data.filter(t => t.type === 'bar').length === 4; })()",
        timeout=30_000)
    assert "Residual = chained total" in page.inner_text("#rt-method")
    _shot(page, output_dir, "real-terms-total-of-parts")
    _part_shot(page, "#rt-parts-box", output_dir, "part-total-choices")
    _part_shot(page, "#rt-figure", output_dir, "part-total-figure")
    _part_shot(page, "#rt-warnings", output_dir, "part-total-notes")
    page.check("#rt-basis input[value='yoy']")
    page.wait_for_function("document.querySelector('#rt-contrib-table').innerText.includes("
                           "'on the same period a year earlier')", timeout=30_000)
    # the bars of each period add up to the total's growth line, as drawn in the browser
    gap = page.evaluate(
        "(() => { const g = document.querySelector('#rt-contrib-figure .js-plotly-plot');"
        " const bars = g.data.filter(t => t.type === 'bar');"
        " const line = g.data.find(t => t.type === 'scatter'); let worst = 0;"
        " line.y.forEach((v, i) => { if (v === null) return;"
        "   const s = bars.reduce((a, b) => a + (b.y[i] || 0), 0);"
        "   worst = Math.max(worst, Math.abs(s - v)); }); return worst; })()")
    assert gap < 1e-9
    page.locator("#rt-contrib-box").scroll_into_view_if_needed()
    _shot(page, output_dir, "real-terms-contributions-yoy")
    _part_shot(page, "#rt-contrib-box", output_dir, "part-contributions")

    # --- saved with the workspace (the demo goes to a copy), then the workbook
    page.click("#rt-save")
    page.wait_for_function("document.querySelector('#rt-saved').innerText.includes("
                           "'Saved as version')", timeout=30_000)
    page.wait_for_function("document.querySelector('#rb-workspace-label').innerText"
                           ".includes('My copy of the demo')", timeout=30_000)
    _quiet(page)  # every screen recomputes for the new workspace version first
    page.click("#rb-nav-share", timeout=120_000)
    page.wait_for_selector("#rb-screen-share:not([hidden])")
    page.wait_for_function("document.querySelector('#sx-scope').innerText.includes("
                           "'Contributions sheets of the saved total')", timeout=30_000)
    with page.expect_download(timeout=120_000) as info:
        page.click("#sx-dl-xlsx")
    path = tmp_path / info.value.suggested_filename
    info.value.save_as(str(path))
    wb = openpyxl.load_workbook(path, read_only=True)
    assert "Contributions" in wb.sheetnames and "Revision band" in wb.sheetnames
    text = " ".join(str(c) for r in wb["Contributions"].iter_rows(values_only=True)
                    for c in r if c is not None)
    assert "residual" in text and "Footwear revenue" in text
    _shot(page, output_dir, "share-with-total")
    _part_shot(page, "#sx-scope", output_dir, "part-share-scope")

    # --- the revision band on Revisions
    _quiet(page)
    page.click("#rb-nav-revisions", timeout=120_000)
    page.wait_for_selector("#rb-screen-revisions:not([hidden])")
    page.wait_for_function("document.querySelector('#rv-band').innerText.includes("
                           "'past revisions of this index would put it between')",
                           timeout=60_000)
    page.wait_for_function(
        "(() => { const g = document.querySelector('#rv-band-figure .js-plotly-plot');"
        " return g && g.data.filter(t => t.fill === 'tonexty').length === 2; })()",
        timeout=30_000)
    page.locator("#rv-band-figure").scroll_into_view_if_needed()
    _shot(page, output_dir, "revisions-band")
    _part_shot(page, "#rv-band-figure", output_dir, "part-revisions-band-figure")
    _part_shot(page, "#rv-band", output_dir, "part-revisions-band-tables")

    # --- and on Real terms, for one series under the revised deflator
    _quiet(page)
    page.click("#rb-nav-real", timeout=120_000)
    _pick(page, page.locator("#rt-series"), "Apparel revenue", "Apparel revenue")
    page.wait_for_selector("#rt-deflator-box:not([hidden])", timeout=30_000)
    _choose(page, "rt-deflator", ["Chained consumer index"])
    page.wait_for_function("document.querySelector('#rt-warnings').innerText.includes("
                           "'past revisions of this index would put it between')",
                           timeout=30_000)
    page.wait_for_function(
        "(() => { const g = document.querySelector('#rt-figure .js-plotly-plot');"
        " return g && g.data.some(t => t.name.startsWith('range past revisions') &&"
        " t.fill === 'tonexty'); })()", timeout=30_000)
    assert page.locator("#rt-contrib-box").is_hidden()
    assert "quantiles" in page.inner_text("#rt-method")
    _shot(page, output_dir, "real-terms-band")
    _part_shot(page, "#rt-figure", output_dir, "part-real-band-figure")
    _part_shot(page, "#rt-warnings", output_dir, "part-real-band-notes")
    assert problems == [], "\n".join(problems)
    page.close()
