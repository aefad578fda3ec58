"""Honest states of access, in a real Chromium against gunicorn with two workers on the
serving machine (local editing on, as ``realbasis serve`` runs it): a revoked or expired
reviewer link says so at the very next click and on every reload — never turning into the
editable dashboard —, a change refused to a reviewer is said on the page, and an editor
whose sign-in was ended is told to sign in again. Screenshots go to tests/output/."""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
import served

pytestmark = [pytest.mark.browser, pytest.mark.slow]

TOKEN = "browser-test-editor-token-0123456789-abcdef"
ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--no-first-run"]


@pytest.fixture(scope="module")
def site(tmp_path_factory: pytest.TempPathFactory) -> Iterator[dict[str, Any]]:
    from dashboard.data import DataAccess
    from pipeline.settings import Settings

    data_dir = tmp_path_factory.mktemp("honest")
    data = DataAccess(Settings(data_dir=str(data_dir)))
    ref = data.demo_ref()
    server = served.start(data_dir, {"REALBASIS_LOCAL_EDITING": "1"})
    try:
        yield {"url": server.url, "store": data.store, "ref": ref, "server": server}
    finally:
        server.stop()
        data.store.close()
    log = server.log_text()
    assert "Traceback" not in log, log[-3000:]


@pytest.fixture()
def page(chromium_path: str) -> Iterator[Any]:
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=chromium_path, args=ARGS)
        pg = browser.new_page(viewport={"width": 1280, "height": 900})
        yield pg
        browser.close()


def _open_reviewer(page: Any, site: dict[str, Any], token: str) -> None:
    page.goto(f"{site['url']}/review/{token}")
    page.wait_for_selector("#rb-reviewer-banner", timeout=60_000)
    page.wait_for_selector("#rb-workspace-label strong", timeout=60_000)
    _settle(page)


def _settle(page: Any) -> None:
    """Wait until the page's chain of callbacks has ended: none in flight and none new for
    two seconds (the load computes every screen, with pauses longer than "network idle"
    between the links of the chain on a busy machine)."""
    state = {"started": 0, "open": 0}

    def started(r: Any) -> None:
        if "_dash-update-component" in r.url:
            state["started"] += 1
            state["open"] += 1

    def ended(r: Any) -> None:
        if "_dash-update-component" in r.url:
            state["open"] -= 1

    page.on("request", started)
    page.on("requestfinished", ended)
    page.on("requestfailed", ended)
    page.wait_for_load_state("networkidle")
    last = -1
    while last != state["started"] or state["open"] > 0:
        last = state["started"]
        page.wait_for_timeout(2000)


def _problem(page: Any) -> str:
    page.wait_for_selector("#rb-page-problem [role=alert]", timeout=30_000)
    return page.inner_text("#rb-page-problem")


def test_a_revoked_link_says_so_at_the_next_click_and_on_reload(
        site: dict[str, Any], page: Any, output_dir: Path):
    store = site["store"]
    token, info = store.create_link(site["ref"].id, label="to be revoked")
    _open_reviewer(page, site, token)
    store.revoke_link(info.id)
    page.click("#rb-nav-real")  # the very next click
    text = _problem(page)
    assert "no longer valid" in text and "SH002" in text
    assert page.is_visible("#rb-page-problem a[href='review-exit']")
    assert "rb-access-lost" in (page.get_attribute("body", "class") or "")
    page.screenshot(path=str(output_dir / "reviewer-link-revoked-click.png"))
    # a reload on the serving machine: still the reviewer, told the link is gone
    for _ in range(2):
        r = page.reload()
        assert r is not None and r.status == 403
        assert r.headers.get("x-realbasis-access") != "editor"
        body = page.inner_text("body")
        assert "no longer valid" in body and "Leave the reviewer view" in body
        assert page.locator("#in-upload").count() == 0  # no editable dashboard
    page.screenshot(path=str(output_dir / "reviewer-link-revoked-reload.png"))
    page.click("text=Leave the reviewer view")
    assert "You left the reviewer view" in page.inner_text("body")
    page.screenshot(path=str(output_dir / "reviewer-left.png"))


def test_an_expired_link_says_so_at_the_next_click(site: dict[str, Any], page: Any,
                                                   output_dir: Path):
    import sqlalchemy as sa

    from pipeline.store import links_table

    store = site["store"]
    token, info = store.create_link(site["ref"].id, label="expiring",
                                    expires_at=dt.datetime.now(dt.UTC) + dt.timedelta(hours=1))
    _open_reviewer(page, site, token)
    with store.engine.begin() as conn:  # an hour passes
        conn.execute(sa.update(links_table).where(links_table.c.id == info.id).values(
            expires_at=dt.datetime.now(dt.UTC) - dt.timedelta(seconds=1)))
    page.click("#rb-nav-spread")
    text = _problem(page)
    assert "no longer valid" in text and "expired" in text
    page.screenshot(path=str(output_dir / "reviewer-link-expired-click.png"))


def test_a_change_refused_to_a_reviewer_is_said_on_the_page(site: dict[str, Any], page: Any,
                                                            output_dir: Path):
    store = site["store"]
    version = store.current_version(site["ref"].id)
    token, _ = store.create_link(site["ref"].id, label="pushy")
    _open_reviewer(page, site, token)
    page.click("#rb-nav-real")
    page.wait_for_function("document.querySelector('#rt-title').innerText.includes('constant')",
                           timeout=60_000)
    # past the looks: the button is disabled, so press it the way the renderer does
    page.evaluate("window.dash_clientside.set_props('rt-save', {n_clicks: 1})")
    text = _problem(page)
    assert "Not changed" in text and "SH001" in text and "read-only" in text
    page.screenshot(path=str(output_dir / "reviewer-change-refused.png"))
    assert store.current_version(site["ref"].id) == version


def test_an_ended_editor_sign_in_is_said_on_the_page(tmp_path: Path, page: Any,
                                                     output_dir: Path):
    server = served.start(tmp_path / "token", {"REALBASIS_EDITOR_TOKEN": TOKEN,
                                               "REALBASIS_HOST": "0.0.0.0",
                                               "REALBASIS_DEMO": "0"})
    try:
        page.goto(server.url + "/")
        page.fill("input[name=token]", TOKEN)
        page.click("button[type=submit]")
        page.wait_for_selector("#rb-sign-out", timeout=60_000)
        page.wait_for_selector("#rb-workspace-label strong", timeout=60_000)
        _settle(page)
        from pipeline.store import WorkspaceStore

        with WorkspaceStore(f"sqlite:///{tmp_path / 'token' / 'realbasis.sqlite'}") as store:
            assert store.close_sessions("editor") == 1  # the server ends it
        page.click("#rb-nav-shelf")
        text = _problem(page)
        assert "not signed in as an editor" in text and "SH006" in text
        assert page.is_visible("#rb-page-problem a[href='editor-login']")
        page.screenshot(path=str(output_dir / "editor-session-ended.png"))
        page.goto(server.url + "/")  # a reload leads to the sign-in page
        assert page.locator("input[name=token]").count() == 1
    finally:
        server.stop()
    assert "Traceback" not in server.log_text()
