"""Honest states as users met them (issue 12, items 5 and 7), in a real Chromium against
gunicorn with two workers on the serving machine (local editing on, as ``realbasis serve``
runs it): a revoked reviewer link at the next click and on reload, gaps that break the
lines and are named, a workspace switch that drops a base which does not apply, one dated
copy of the demo, the shelf's older vintages and free names, a total that names its
series, problems said once, stretch labels apart, markup in names shown as text, and the
layout at 390 px and 1024 px. Screenshots go to tests/output/ (states-*.png).

The tests wait for what the page shows (texts, selectors, the figures' data), never for a
number of requests. The workspaces are invented and written into the store before the
server starts. The view-model side is tests/test_view_states.py.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
import served
from conftest import monthly_series

pytestmark = [pytest.mark.browser, pytest.mark.slow]

ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--disable-sync", "--no-first-run"]
LINKED = '<a href="https://example.org/x">Link</a> revenue'
BOLD = "<b>Bold</b> index"
NAN = float("nan")


def _workspaces(data: Any) -> dict[str, Any]:
    """The gapped workspace (a money series missing two months, a series and an index
    named as markup, an index in two vintages ending preliminary then projected) and an
    empty one; plus the demo."""
    months = 48  # 2021-01 .. 2024-12
    sales = [1000.0 + 5 * i for i in range(months)]
    sales[28] = sales[29] = NAN  # 2023-05, 2023-06 missing
    late = ["final"] * 45 + ["preliminary"] + ["projected"] * 2
    early = ["final"] * 36 + ["preliminary"] * 6 + ["final"] * 6
    new = monthly_series("Area price index", [100 + i * 0.3 for i in range(months)],
                         start="2021-01", kind="index", unit="index", vintage="2024-12-31",
                         status=late)
    old = monthly_series("Area price index", [99.5 + i * 0.3 for i in range(months - 6)],
                         start="2021-01", kind="index", unit="index", vintage="2024-06-30",
                         status=early[:months - 6])
    bold = monthly_series(BOLD, [100 + i * 0.2 for i in range(months)], start="2021-01",
                          kind="index", unit="index", vintage="2024-12-31")
    series = {"Sales with a gap": monthly_series("Sales with a gap", sales, start="2021-01"),
              LINKED: monthly_series(LINKED, [500.0 + i for i in range(months)],
                                     start="2021-01")}
    ws = data.create("States: gaps and vintages (illustrative)")
    ws = data.save(dataclasses.replace(ws, series=series, indexes={
        "Area price index": {"2024-12-31": new, "2024-06-30": old}, BOLD: {"2024-12-31": bold}}),
        action="setup")
    empty = data.create("Empty workspace")
    return {"gapped": ws.id, "empty": empty.id, "demo": data.demo_ref().id}


@pytest.fixture(scope="module")
def site(tmp_path_factory: pytest.TempPathFactory, chromium_path: str
         ) -> Iterator[dict[str, Any]]:
    from dashboard.data import DataAccess
    from pipeline.settings import Settings

    data_dir = tmp_path_factory.mktemp("states")
    data = DataAccess(Settings(data_dir=str(data_dir)))
    ids = _workspaces(data)
    server = served.start(data_dir, {"REALBASIS_LOCAL_EDITING": "1"})
    try:
        yield {"url": server.url, "data": data, **ids}
    finally:
        server.stop()
        data.store.close()
    log = server.log_text()
    assert "Traceback" not in log, log[-3000:]


@pytest.fixture(scope="module")
def browser(chromium_path: str) -> Iterator[Any]:
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=chromium_path, args=ARGS)
        yield b
        b.close()


@pytest.fixture()
def page(browser: Any) -> Iterator[Any]:
    """A fresh browser session (own cookies) with console errors collected."""
    context = browser.new_context(viewport={"width": 1300, "height": 950})
    pg = context.new_page()
    pg.problems = []  # type: ignore[attr-defined]
    pg.on("pageerror", lambda e: pg.problems.append(f"page error: {e}"))
    yield pg
    context.close()


# --------------------------------------------------------------------------- helpers


def _open(page: Any, site: dict[str, Any], ws: str | None = None) -> None:
    page.goto(site["url"] + (f"/?ws={site[ws]}" if ws else "/"))
    page.wait_for_selector("#rb-workspace-label strong", timeout=90_000)


def _screen(page: Any, key: str) -> None:
    page.click(f"#rb-nav-{key}", timeout=90_000)
    page.wait_for_selector(f"#rb-screen-{key}:not([hidden])", timeout=60_000)


def _wait_text(page: Any, selector: str, text: str, timeout: int = 90_000) -> None:
    page.wait_for_function(
        "([s, t]) => { const e = document.querySelector(s);"
        " return e && e.textContent.includes(t); }", arg=[selector, text], timeout=timeout)


def _pick(page: Any, dropdown_id: str, text: str, *, option: str | None = None) -> None:
    """Choose the option of a dcc.Dropdown whose label holds ``option`` (default
    ``text``), found by typing ``text`` into its search box."""
    page.locator(f"#{dropdown_id}").click()
    content = page.locator(".dash-dropdown-content[data-state=open]")
    content.wait_for()
    content.locator("input.dash-dropdown-search").fill(text)
    content.locator("[role=option]", has_text=option or text).first.click()
    if content.count():
        page.keyboard.press("Escape")
    content.wait_for(state="detached")


def _enter(page: Any, selector: str, text: str) -> None:
    page.fill(selector, text)
    page.press(selector, "Enter")


def _trace(page: Any, graph: str, name: str, timeout: int = 90_000) -> dict[str, Any]:
    """The first drawn trace of a graph whose name holds ``name`` (x, y, connectgaps)."""
    page.wait_for_function(
        "([g, n]) => { const p = document.querySelector(g + ' .js-plotly-plot');"
        " return p && p.data && p.data.some(t => (t.name || '').includes(n)); }",
        arg=[graph, name], timeout=timeout)
    return page.evaluate(
        "([g, n]) => { const t = document.querySelector(g + ' .js-plotly-plot').data"
        ".find(t => (t.name || '').includes(n));"
        " return {x: Array.from(t.x), y: Array.from(t.y), connectgaps: t.connectgaps}; }",
        [graph, name])


def _shot(page: Any, output_dir: Path, name: str) -> None:
    page.wait_for_timeout(600)  # let plotly finish drawing
    page.screenshot(path=str(output_dir / f"states-{name}.png"), full_page=True)


def _gap_broken(trace: dict[str, Any], *months: str) -> None:
    assert trace["connectgaps"] is False
    for m in months:
        assert m in trace["x"], f"{m} has no place on the axis"
        assert trace["y"][trace["x"].index(m)] is None, f"the line bridges {m}"


def _overlaps(rects: list[dict[str, float]]) -> list[tuple[int, int]]:
    out = []
    for i, a in enumerate(rects):
        for j, b in enumerate(rects[i + 1:], start=i + 1):
            if (a["left"] < b["right"] - 1 and b["left"] < a["right"] - 1
                    and a["top"] < b["bottom"] - 1 and b["top"] < a["bottom"] - 1):
                out.append((i, j))
    return out


def _rects(page: Any, selector: str) -> list[dict[str, float]]:
    return page.evaluate(
        "s => Array.from(document.querySelectorAll(s)).map(e => e.getBoundingClientRect())"
        ".filter(r => r.width > 0).map(r => ({left: r.left, right: r.right, top: r.top,"
        " bottom: r.bottom}))", selector)


# --------------------------------------------------------------------------- access


def test_a_revoked_link_says_so_at_the_next_choice_and_a_reload_stays_a_reviewer(
        site: dict[str, Any], page: Any, output_dir: Path):
    store = site["data"].store
    token, info = store.create_link(site["gapped"], label="states")
    page.goto(f"{site['url']}/review/{token}")
    page.wait_for_selector("#rb-reviewer-banner", timeout=90_000)
    _screen(page, "real")
    _trace(page, "#rt-figure", "Nominal")
    store.revoke_link(info.id)
    # the very next click is a choice on the screen (a request whatever the wiring)
    _pick(page, "rt-series", LINKED, option="Link</a> revenue")
    page.wait_for_selector("#rb-page-problem [role=alert]", timeout=60_000)
    text = page.inner_text("#rb-page-problem")
    assert "no longer valid" in text and "SH002" in text
    assert "rb-access-lost" in (page.get_attribute("body", "class") or "")
    _shot(page, output_dir, "reviewer-revoked-next-click")
    # a reload on the serving machine (local editing on): still a reviewer, told so,
    # never the editable demo
    r = page.reload()
    assert r is not None and r.status == 403
    body = page.inner_text("body")
    assert "no longer valid" in body and "Leave the reviewer view" in body
    assert page.locator("#in-upload").count() == 0 and "Demo:" not in body
    _shot(page, output_dir, "reviewer-revoked-reload")


def test_a_revoked_link_says_so_at_the_next_screen_switch(
        site: dict[str, Any], page: Any, output_dir: Path):
    """Switching screens runs in the browser; the next switch after a revocation still
    shows the message (the switch asks the server whether the page's access holds)."""
    store = site["data"].store
    token, info = store.create_link(site["gapped"], label="states switch")
    page.goto(f"{site['url']}/review/{token}")
    page.wait_for_selector("#rb-reviewer-banner", timeout=90_000)
    _screen(page, "real")
    _trace(page, "#rt-figure", "Nominal")
    _screen(page, "spread")
    _wait_text(page, "#sp-title", "constant")
    page.wait_for_load_state("networkidle")
    store.revoke_link(info.id)
    # both screens are on the page already: no callback runs, only the switch's check
    page.click("#rb-nav-real", force=True)
    page.wait_for_selector("#rb-page-problem [role=alert]", timeout=60_000)
    text = page.inner_text("#rb-page-problem")
    assert "no longer valid" in text and "SH002" in text
    _shot(page, output_dir, "reviewer-revoked-switch")


# --------------------------------------------------------------------------- gaps


def test_missing_months_break_the_line_and_are_named_on_every_screen(
        site: dict[str, Any], page: Any, output_dir: Path):
    _open(page, site, "gapped")
    _screen(page, "real")
    _pick(page, "rt-series", "Sales with a gap")
    _pick(page, "rt-deflator", "Area price index")
    _wait_text(page, "#rt-title", "Sales with a gap")
    _gap_broken(_trace(page, "#rt-figure", "Nominal"), "2023-05", "2023-06")
    _wait_text(page, "#rt-warnings", "DF011")
    assert "2023-05" in page.inner_text("#rt-warnings")  # the gap is named
    _shot(page, output_dir, "gap-real-terms")

    _screen(page, "spread")
    _pick(page, "sp-series", "Sales with a gap")
    _wait_text(page, "#sp-title", "Sales with a gap")
    _gap_broken(_trace(page, "#sp-figure", "Nominal"), "2023-05", "2023-06")
    _wait_text(page, "#sp-warnings", "DF011")
    _shot(page, output_dir, "gap-spread")

    _screen(page, "revisions")
    _pick(page, "rv-series", "Sales with a gap")
    _enter(page, "#rv-base", "2022")  # a base both vintages cover
    _gap_broken(_trace(page, "#rv-figure", "as of 2024-12-31"), "2023-05", "2023-06")
    _wait_text(page, "#rv-warnings", "DF011")
    _shot(page, output_dir, "gap-revisions")
    assert page.problems == []  # type: ignore[attr-defined]


# --------------------------------------------------------------------------- escaping


def test_names_written_as_markup_are_shown_as_typed_in_the_charts(
        site: dict[str, Any], page: Any, output_dir: Path):
    _open(page, site, "gapped")
    _screen(page, "shelf")
    page.wait_for_function(  # the shelf draws the first indexes, this one among them
        "t => Array.from(document.querySelectorAll('#sh-figure .legendtext'))"
        ".some(e => e.textContent.includes(t))", arg=BOLD, timeout=60_000)
    # no bold element and no link drawn from a name: the tags are text
    assert page.locator("#sh-figure .legend b, #sh-figure .legend a").count() == 0
    assert page.evaluate("() => document.querySelectorAll('#sh-figure svg a').length") == 0
    _shot(page, output_dir, "markup-shelf")

    _screen(page, "spread")
    _pick(page, "sp-series", "Link", option="Link</a> revenue")
    _wait_text(page, "#sp-title", LINKED)  # the page's own title: text, as typed
    page.wait_for_function(
        "t => Array.from(document.querySelectorAll('#sp-figure .legendtext'))"
        ".some(e => e.textContent.includes(t))", arg=BOLD, timeout=60_000)
    assert page.evaluate("() => document.querySelectorAll('#sp-figure svg a').length") == 0
    assert page.locator("#sp-figure .legend b").count() == 0
    _shot(page, output_dir, "markup-spread")


# --------------------------------------------------------------------------- workspace switch


def test_switching_to_an_empty_workspace_drops_the_typed_base(
        site: dict[str, Any], page: Any, output_dir: Path):
    _open(page, site, "gapped")
    _screen(page, "real")
    _pick(page, "rt-series", "Sales with a gap")
    _enter(page, "#rt-base", "2022")
    _wait_text(page, "#rt-title", "constant 2022")
    _screen(page, "intake")
    _pick(page, "in-workspace-list", "Empty workspace")
    _wait_text(page, "#rb-workspace-label", "Empty workspace")
    _screen(page, "real")
    page.wait_for_function("() => document.querySelector('#rt-base').value === ''",
                           timeout=60_000)
    _shot(page, output_dir, "switch-empty-workspace")
    # and back: the gapped workspace's own (saved: none) base, not the other's
    _screen(page, "intake")
    _pick(page, "in-workspace-list", "States: gaps")
    _wait_text(page, "#rb-workspace-label", "States: gaps")
    _screen(page, "real")
    _wait_text(page, "#rt-title", "Sales with a gap")


# --------------------------------------------------------------------------- the demo copy


def test_changes_to_the_demo_go_to_one_dated_copy_and_the_user_is_told(
        site: dict[str, Any], page: Any, output_dir: Path):
    from dashboard.data import demo_copy_name, is_demo_copy

    name = demo_copy_name()
    _open(page, site, "demo")
    _screen(page, "shelf")
    _pick(page, "sh-target", "Fixed-basket consumer index")
    page.fill("#sh-rebase-base", "2022")
    page.click("#sh-rebase")
    _wait_text(page, "#sh-message", "Saved as version")
    message = page.inner_text("#sh-message")
    assert name in message and "shared demo is left as it was" in message
    _wait_text(page, "#rb-workspace-label", name)
    _wait_text(page, "#rb-workspace-label", "your copy")
    _shot(page, output_dir, "demo-copy-first")
    # back to the shared demo, another change: the same copy, said so
    _screen(page, "intake")
    _pick(page, "in-workspace-list", "Demo:")
    _wait_text(page, "#rb-workspace-label", "Demo:")
    _screen(page, "shelf")
    _pick(page, "sh-target", "Fixed-basket consumer index")
    page.fill("#sh-rebase-base", "2023")
    page.click("#sh-rebase")
    _wait_text(page, "#sh-message", "started again from the demo")
    assert name in page.inner_text("#sh-message")
    _shot(page, output_dir, "demo-copy-again")
    copies = [w for w in site["data"].store.list() if is_demo_copy(w.name)]
    assert [w.name for w in copies] == [name]


# --------------------------------------------------------------------------- the shelf


def test_shelf_links_an_older_vintage_and_names_a_relink(site: dict[str, Any], page: Any,
                                                         output_dir: Path):
    _open(page, site, "gapped")
    _screen(page, "shelf")
    page.click("#rb-screen-shelf details:has(#sh-link) > summary")
    _pick(page, "sh-link-old", "older vintage 2024-06-30",
          option="Area price index, older vintage 2024-06-30")
    _pick(page, "sh-link-new", "Area price index (latest")
    page.fill("#sh-link-overlap", "2023-12")
    page.click("#sh-link")
    first = "Area price index (vintage 2024-06-30) linked with Area price index"
    _wait_text(page, "#sh-message", f"Added '{first}'")
    page.click("#sh-link")  # the same link again: a new name, the first one kept
    _wait_text(page, "#sh-message", f"'{first} (2)'")
    assert "stays as it was" in page.inner_text("#sh-message")
    _wait_text(page, "#sh-table", f"{first} (2)")
    # the legend sits under the plot, clear of the lines
    page.wait_for_selector("#sh-figure .legend")
    legend = page.locator("#sh-figure .legend").bounding_box()
    plot = page.locator("#sh-figure .nsewdrag").first.bounding_box()
    assert legend and plot and legend["y"] >= plot["y"] + plot["height"] - 1
    _shot(page, output_dir, "shelf-relink")


# --------------------------------------------------------------------------- totals, labels


def test_a_total_names_its_series_problems_once_and_labels_apart(
        site: dict[str, Any], page: Any, output_dir: Path):
    _open(page, site, "demo")
    _screen(page, "real")
    _pick(page, "rt-series", "Total of 4 series under one deflator: Bus",
          option="Bus operations")
    _wait_text(page, "#rt-title", "Total of 4 series (Bus operations, Rail operations, "
                                  "Capital maintenance and Paratransit services)")
    items = page.evaluate("() => Array.from(document.querySelectorAll('#rt-warnings "
                          ".rb-problem-list > li')).map(e => e.innerText)")
    assert len(items) == len(set(items)), "a problem is listed twice"
    _shot(page, output_dir, "total-named")

    # a preliminary month just before projected ones: the two labels apart
    _open(page, site, "gapped")
    _screen(page, "real")
    _pick(page, "rt-series", "Sales with a gap")
    _pick(page, "rt-deflator", "Area price index")
    _enter(page, "#rt-base", "2022")  # a final base: 2024-10 preliminary, then projected
    _wait_text(page, "#rt-title", "Sales with a gap in constant 2022")
    page.wait_for_function(
        "() => { const t = Array.from(document.querySelectorAll('#rt-figure .annotation-text'))"
        ".map(e => e.textContent).join('|');"
        " return t.includes('projected') && t.includes('preliminary index'); }",
        timeout=60_000)
    labels = _rects(page, "#rt-figure .annotation")
    assert len(labels) >= 2 and _overlaps(labels) == [], labels
    page.locator("#rt-figure").screenshot(path=str(output_dir / "states-stretch-labels.png"))


# --------------------------------------------------------------------------- layout


@pytest.mark.parametrize("width,height", [(390, 844), (1024, 768)])
def test_layout_on_a_phone_and_a_tablet(site: dict[str, Any], browser: Any, width: int,
                                        height: int, output_dir: Path):
    context = browser.new_context(viewport={"width": width, "height": height})
    page = context.new_page()
    try:
        _open(page, site, "demo")
        for key, graph in (("intake", None), ("shelf", "#sh-figure"), ("real", "#rt-figure"),
                           ("budget", "#bt-figure"), ("spread", "#sp-figure"),
                           ("revisions", "#rv-figure"), ("share", None)):
            _screen(page, key)
            if graph:
                page.wait_for_selector(f"{graph} .xtick text", timeout=90_000)
            if key == "budget":
                _wait_text(page, "#bt-table", "Total")
            page.wait_for_timeout(800)
            page.screenshot(path=str(output_dir / f"states-layout-{width}-{key}.png"),
                            full_page=True)
            # the page never scrolls sideways: only table wrappers do
            wide = page.evaluate("() => document.documentElement.scrollWidth")
            assert wide <= width + 1, f"{key}: the page is {wide} px wide at {width} px"
            clipped = page.evaluate(
                "() => Array.from(document.querySelectorAll('#rb-screen-" + key
                + " table')).filter(t => { const w = t.parentElement;"
                " const s = getComputedStyle(w).overflowX;"
                " return t.getBoundingClientRect().width > w.clientWidth + 1"
                " && !(s === 'auto' || s === 'scroll'); }).length")
            assert clipped == 0, f"{key}: a table is cut off"
            if graph:
                page.locator(graph).screenshot(
                    path=str(output_dir / f"states-layout-{width}-{key}-chart.png"))
                # level labels must not run into each other; plotly turns crowded ones
                # (then their boxes may overlap while the slanted texts do not)
                level = page.evaluate(
                    "g => Array.from(document.querySelectorAll(g + ' .xtick text'))"
                    ".every(e => !(e.getAttribute('transform') || '').includes('rotate'))",
                    graph)
                ticks = _rects(page, f"{graph} .xtick text")
                assert ticks, f"{key}: no x-axis labels"
                if level:
                    assert _overlaps(ticks) == [], f"{key}: x-axis labels collide"
                box = page.locator(graph).bounding_box()
                assert box and box["width"] <= width
    finally:
        context.close()


# --------------------------------------------------------------------------- opening


def _computes(page: Any) -> list[str]:
    """The Real terms computations the page asks the server for (collected from now)."""
    asked: list[str] = []
    page.on("request", lambda r: asked.append(r.url) if r.method == "POST"
            and "rt-title.children" in (r.post_data or "") else None)
    return asked


def test_a_shared_address_opens_with_its_choices_computed_by_the_server(site: dict[str, Any],
                                                                        page: Any,
                                                                        output_dir: Path):
    # dashboard.app.opening: the layout comes with the screen the address names computed
    # for the address's choices (told by assets/shell.js in the rb_opening cookie), so the
    # first load asks for no computation; the chart is drawn from the layout.
    from urllib.parse import quote

    asked = _computes(page)
    choices = f"deflator={quote('Fixed-basket consumer index')}&base=2019"
    page.goto(site["url"] + f"/?ws={site['demo']}#real?{choices}")
    _wait_text(page, "#rt-title", "deflated by Fixed-basket consumer index")
    _wait_text(page, "#rt-title", "constant 2019 dollars")
    page.wait_for_selector("#rt-figure .main-svg", timeout=60_000)
    page.wait_for_load_state("networkidle")
    assert asked == [], asked
    assert page.is_visible("#rb-screen-real") and not page.is_visible("#rb-screen-intake")
    assert "deflator=Fixed-basket" in page.evaluate("window.location.hash")
    page.screenshot(path=str(output_dir / "states-opened-with-choices.png"), full_page=True)
    assert page.problems == []  # type: ignore[attr-defined]


# as if another tab had just written the cookie: the page's own write is replaced
OTHER_TAB = """(() => {
  const d = Object.getOwnPropertyDescriptor(Document.prototype, 'cookie');
  Object.defineProperty(document, 'cookie', {configurable: true,
    get() { return d.get.call(document); },
    set(v) { d.set.call(document, v.replace(/^rb_opening=[^;]*/, 'rb_opening=real')); }});
})();"""


def test_choices_the_server_did_not_see_are_applied_in_the_page(site: dict[str, Any],
                                                               page: Any):
    # The cookie can name another address than the page's (two tabs opened at once): the
    # server computes what it was told, and the page, whose address holds other choices,
    # opens the screen again for them (assets/shell.js gateScreens).
    from urllib.parse import quote

    page.add_init_script(OTHER_TAB)
    asked = _computes(page)
    choices = f"deflator={quote('Fixed-basket consumer index')}&base=2019"
    page.goto(site["url"] + f"/?ws={site['demo']}#real?{choices}")
    _wait_text(page, "#rt-title", "deflated by Fixed-basket consumer index")
    _wait_text(page, "#rt-title", "constant 2019 dollars")
    assert asked, "computed in the page, not in the layout"
    assert page.problems == []  # type: ignore[attr-defined]
