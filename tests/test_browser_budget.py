"""The budget officer's path in a real browser (Chromium through Playwright, gunicorn with
two workers, as tests/test_browser.py): the workspace's fiscal year on Data intake, a
fiscal-year base on a monthly and on a fiscal series, deflators offered only when they can
serve (the others say why), projected out-years, outlay rates, the budget table and its
download, and the workspace export carrying the Budget sheet. Screenshots go to
tests/output/ (budget-*.png). The demo data is invented and illustrative.
"""

from __future__ import annotations

import io
from pathlib import Path
from typing import Any

import openpyxl
import pytest
from test_browser import _choose, _shot, browser, server  # noqa: F401 - fixtures

pytestmark = [pytest.mark.browser, pytest.mark.slow]

OPTION = r"--[a-z][a-z-]+"


def _text(page: Any, selector: str) -> str:
    return page.text_content(selector) or ""


def _wait_text(page: Any, selector: str, text: str, timeout: int = 60_000) -> None:
    page.wait_for_function(
        "([s, t]) => { const e = document.querySelector(s);"
        " return e && e.textContent.includes(t); }",
        arg=[selector, text], timeout=timeout)


def _enter(page: Any, selector: str, text: str) -> None:
    page.fill(selector, text)
    page.press(selector, "Enter")


def _no_option_names(page: Any) -> None:
    import re

    body = page.inner_text("main")
    assert not re.search(r"(?<![\w-])--[a-z][a-z-]+", body), "a command-line option on screen"


def test_the_budget_path_in_a_real_browser(server: str, browser: Any,  # noqa: F811
                                           output_dir: Path):
    page = browser.new_page(viewport={"width": 1300, "height": 1000})
    problems: list[str] = []
    page.on("console", lambda m: problems.append(f"console {m.type}: {m.text}")
            if m.type == "error" else None)
    page.on("pageerror", lambda e: problems.append(f"page error: {e}"))
    page.goto(server)
    page.wait_for_selector("#rb-workspace-label strong", timeout=60_000)

    # --- Data intake: the workspace's fiscal year, inferred from Tallmere's fiscal series
    _wait_text(page, "#in-ws-fy", "Fiscal years start in July")
    assert "taken from the workspace's 4 fiscal series" in _text(page, "#in-ws-fy")
    _shot(page, output_dir, "budget-intake-fiscal-year")

    # --- Real terms: a monthly series in constant FY2025 dollars
    page.click("#rb-nav-real")
    page.wait_for_selector("#rb-screen-real:not([hidden])")
    _wait_text(page, "#rt-title", "constant")
    assert "FY2025" in (page.get_attribute("#rt-base", "placeholder") or "")
    _choose(page, "rt-series", ["Apparel revenue"])
    _choose(page, "rt-deflator", ["Chained consumer index"])
    _enter(page, "#rt-base", "FY2025")
    _wait_text(page, "#rt-title", "Apparel revenue in constant FY2025 dollars")
    _wait_text(page, "#rt-method", "Fiscal years start in July")
    _shot(page, output_dir, "budget-real-monthly-fy-base")

    # --- a fiscal series: the calendar-year index cannot serve it and says why
    _choose(page, "rt-series", ["Rail operations"])
    _wait_text(page, "#rt-deflator-why", "Construction cost index: serves only if interpolated")
    page.locator("#rt-deflator").click()
    content = page.locator(".dash-dropdown-content[data-state=open]")
    content.wait_for()
    content.locator("input.dash-dropdown-search").fill("Construction")
    option = content.locator("[role=option]:has(input[value='Construction cost index'])")
    assert "serves only if interpolated" in option.first.inner_text()
    disabled = option.first.evaluate(
        "e => e.getAttribute('aria-disabled') === 'true' || e.hasAttribute('data-disabled')"
        " || !!e.querySelector('input[disabled]')")
    assert disabled, "a deflator that cannot serve is not offered"
    page.keyboard.press("Escape")
    content.wait_for(state="detached")
    page.click("#rt-deflator-why summary")
    _wait_text(page, "#rt-title", "Rail operations in constant FY2025 dollars")
    _wait_text(page, "#rt-warnings", "FY2027–FY2030 (projected values) of Rail operations are "
                                     "not shown")
    assert "project Chained consumer index until 2030-06" in _text(page, "#rt-warnings")
    _shot(page, output_dir, "budget-real-fiscal-why-not")
    # with Denton interpolation allowed the construction cost index serves
    page.check("#rt-interp input[type=checkbox]")
    _choose(page, "rt-deflator", ["Construction cost index"])
    _wait_text(page, "#rt-title", "deflated by Construction cost index")
    _wait_text(page, "#rt-method", "Denton")
    page.uncheck("#rt-interp input[type=checkbox]")

    # --- outlay-weighted authority on a capital program
    _choose(page, "rt-series", ["Capital maintenance"])
    _choose(page, "rt-deflator", ["Government consumption deflator"])
    _enter(page, "#rt-outlay", "50, 30, 10")
    _wait_text(page, "#rt-warnings", "DF020")
    assert "'50, 30, 10'" in _text(page, "#rt-warnings")  # answered with what was typed
    _enter(page, "#rt-outlay", "50, 30, 20")
    _wait_text(page, "#rt-title", "through outlay rates (50 % in the year of authority")
    _wait_text(page, "#rt-outlay-state", "not saved yet")
    _wait_text(page, "#rt-warnings", "project Government consumption deflator until FY2032")
    page.wait_for_function(
        "(() => { const g = document.querySelector('#rt-figure .js-plotly-plot');"
        " return g && g.data.some(t => t.name.endsWith('(projected)') && t.line.dash === 'dash'"
        "); })()", timeout=30_000)
    _shot(page, output_dir, "budget-real-outlay-rates")
    page.click("#rt-save")
    _wait_text(page, "#rt-saved", "Saved as version")
    _wait_text(page, "#rb-workspace-label", "My copy of the demo")
    _wait_text(page, "#rt-outlay-state", "saved with the workspace")

    # --- Deflator spread: an unusable deflator is left out and named, verdict over the rest
    page.click("#rb-nav-spread")
    page.wait_for_selector("#rb-screen-spread:not([hidden])")
    _choose(page, "sp-series", ["Rail operations"])
    _wait_text(page, "#sp-deflator-why", "Construction cost index")
    _wait_text(page, "#sp-verdict", "deflator")
    _shot(page, output_dir, "budget-spread")

    # --- Deflator shelf: the rate is percent a year; out of range answered as typed
    page.click("#rb-nav-shelf")
    page.wait_for_selector("#rb-screen-shelf:not([hidden])")
    _choose(page, "sh-target", ["Chained consumer index"])
    page.fill("#sh-project-rate", "250")
    page.fill("#sh-project-until", "FY2030")
    page.click("#sh-project")
    _wait_text(page, "#sh-message", "WS202")
    assert "'250'" in _text(page, "#sh-message")
    page.fill("#sh-project-rate", "2.5")
    page.click("#sh-project")
    _wait_text(page, "#sh-table", "Chained consumer index projected at 2.5 % a year")
    _shot(page, output_dir, "budget-shelf-projected")

    # --- Budget table: the programs by fiscal year, then-year and constant dollars
    page.click("#rb-nav-budget")
    page.wait_for_selector("#rb-screen-budget:not([hidden])")
    _wait_text(page, "#bt-title", "Programs by fiscal years starting July")
    _enter(page, "#bt-base", "FY2025")
    _wait_text(page, "#bt-title", "constant FY2025 dollars")
    table = _text(page, "#bt-table")
    for word in ("Bus operations", "Capital maintenance", "Total", "then-year dollars",
                 "constant FY2025 dollars", "real growth on the previous year", "projected"):
        assert word in table, word
    assert page.locator("#bt-table th.rb-projected").count() >= 4  # FY2027-FY2030
    _wait_text(page, "#bt-outlay-saved", "Capital maintenance")
    _wait_text(page, "#bt-summary", "real growth")
    _shot(page, output_dir, "budget-table")
    page.locator("#bt-table").screenshot(path=str(output_dir / "dashboard-budget-table-close.png"))
    page.locator("#bt-table .rb-scroll").evaluate("e => e.scrollLeft = e.scrollWidth")
    page.locator("#bt-table").screenshot(path=str(output_dir /
                                                  "dashboard-budget-table-out-years.png"))
    page.click("#bt-deflator-why summary")
    page.locator("#rb-screen-budget .rb-controls").first.screenshot(
        path=str(output_dir / "dashboard-budget-controls.png"))
    page.locator("#bt-deflator-why").screenshot(path=str(output_dir / "dashboard-budget-why.png"))
    # the monthly consumer index, projected on the shelf, now serves the out-years
    _choose(page, "bt-deflator", ["Chained consumer index projected at 2.5 % a year"])
    _wait_text(page, "#bt-title", "Chained consumer index projected at 2.5 % a year")
    _choose(page, "bt-deflator", ["Government consumption deflator"])
    _wait_text(page, "#bt-title", "Government consumption deflator")
    # then-year <-> constant: amounts given in constant dollars
    page.check("#bt-given input[value='constant']")
    _wait_text(page, "#bt-method", "turned into then-year dollars")
    page.check("#bt-given input[value='then-year']")
    _wait_text(page, "#bt-method", "Amounts given in then-year dollars")
    with page.expect_download(timeout=120_000) as dl:
        page.click("#bt-dl-csv")
    csv = Path(dl.value.path()).read_text(encoding="utf-8")
    assert csv.startswith("program,measure,FY2016")
    page.click("#bt-save")
    _wait_text(page, "#bt-saved", "Saved as version")
    _shot(page, output_dir, "budget-table-saved")
    _no_option_names(page)

    # --- Share and export: the workbook carries the Budget sheet and the outlay rates
    page.click("#rb-nav-share")
    page.wait_for_selector("#rb-screen-share:not([hidden])")
    _wait_text(page, "#sx-scope", "Budget")
    _wait_text(page, "#sx-scope", "outlay rates")
    with page.expect_download(timeout=120_000) as dl:
        page.click("#sx-dl-xlsx")
    book = openpyxl.load_workbook(io.BytesIO(Path(dl.value.path()).read_bytes()),
                                  read_only=True)
    assert "Budget" in book.sheetnames
    method = " ".join(str(c) for r in book["Method"].iter_rows(values_only=True) for c in r
                      if c)
    assert "outlay rates" in method
    _shot(page, output_dir, "budget-share")
    assert problems == [], "\n".join(problems)
    page.close()
