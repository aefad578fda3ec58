"""The Chromium kept open for chart images (dashboard/images.py).

A stand-in for kaleido's browser counts how often one is opened and closed (what the
module promises: one per process, reused, closed on failure or when idle, never the
parent's from a forked child); one browser test renders real PNGs through the system
Chromium. The PNG signature and IHDR layout are from the PNG specification (W3C PNG,
2nd ed., 5.2 and 11.2.2).
"""

from __future__ import annotations

import asyncio
import os
import time

import pytest

from dashboard import images
from dashboard.images import ChartImages


class FakeBrowser:
    opened = 0
    closed = 0

    def __init__(self, fail: bool = False) -> None:
        self.fail = fail

    async def calc_fig(self, figure, opts):
        await asyncio.sleep(0)
        if self.fail or figure.get("fail"):
            raise RuntimeError("renderer crashed")
        return b"\x89PNG" + repr(sorted(opts.items())).encode()

    async def close(self):
        type(self).closed += 1


@pytest.fixture
def fake(monkeypatch):
    FakeBrowser.opened = FakeBrowser.closed = 0

    async def _open(path):
        FakeBrowser.opened += 1
        return FakeBrowser()

    monkeypatch.setattr(ChartImages, "_open", staticmethod(_open))
    r = ChartImages()
    yield r
    r.close()


def test_one_browser_serves_every_image(fake):
    a = fake.png({}, 100, 50, "/x/chromium")
    b = fake.png({}, 100, 50, "/x/chromium")
    assert a == b and a.startswith(b"\x89PNG") and b"100" in a
    assert FakeBrowser.opened == 1 and fake.running
    fake.close()
    assert FakeBrowser.closed == 1 and not fake.running
    fake.png({}, 100, 50, "/x/chromium")  # starts again when wanted
    assert FakeBrowser.opened == 2


def test_warm_starts_it_before_the_first_image(fake):
    fake.warm("/x/chromium")
    assert fake.running
    fake.warm("/x/chromium")  # already open or starting: nothing more
    fake.png({}, 10, 10, "/x/chromium")
    assert FakeBrowser.opened == 1
    fake.warm(None)  # no Chromium: nothing happens
    assert FakeBrowser.opened == 1


def test_a_failed_image_closes_the_browser_and_the_next_one_starts_fresh(fake):
    fake.png({}, 10, 10, "/x/chromium")
    with pytest.raises(RuntimeError, match="crashed"):
        fake.png({"fail": True}, 10, 10, "/x/chromium")
    assert not fake.running and FakeBrowser.closed == 1
    assert fake.png({}, 10, 10, "/x/chromium").startswith(b"\x89PNG")
    assert FakeBrowser.opened == 2


def test_another_chromium_path_replaces_the_browser(fake):
    fake.png({}, 10, 10, "/x/chromium")
    fake.png({}, 10, 10, "/y/chromium")
    assert FakeBrowser.opened == 2 and FakeBrowser.closed == 1


def test_it_closes_itself_when_idle(fake, monkeypatch):
    monkeypatch.setattr(images, "IDLE_SECONDS", 0.05)
    fake.png({}, 10, 10, "/x/chromium")
    deadline = time.monotonic() + 5
    while fake.running and time.monotonic() < deadline:
        time.sleep(0.02)
    assert not fake.running and FakeBrowser.closed == 1


def test_a_forked_child_never_closes_the_parents_browser(fake):
    fake.png({}, 10, 10, "/x/chromium")
    pid = os.fork()
    if pid == 0:  # the child: its close is a no-op on the parent's browser
        try:
            fake.close()
            code = 0 if not fake.running and FakeBrowser.closed == 0 else 1
        finally:
            os._exit(code if "code" in locals() else 2)
    _, status = os.waitpid(pid, 0)
    assert os.waitstatus_to_exitcode(status) == 0
    assert fake.running and FakeBrowser.closed == 0
    fake.png({}, 10, 10, "/x/chromium")
    assert FakeBrowser.opened == 1  # the parent still uses its own


@pytest.mark.browser
def test_real_chromium_renders_twice_without_restarting(chromium_path):
    fig = {"data": [{"type": "scatter", "x": [1, 2, 3], "y": [3, 1, 2]}],
           "layout": {"title": {"text": "illustrative"}}}
    r = ChartImages()
    try:
        first = r.png(fig, 640, 360, chromium_path)
        started = r._browser
        t = time.perf_counter()
        second = r.png(fig, 640, 360, chromium_path)
        warm_s = time.perf_counter() - t
        assert r._browser is started  # the same browser served both
        for png in (first, second):
            assert png[:8] == b"\x89PNG\r\n\x1a\n"
            assert int.from_bytes(png[16:20], "big") == 640
            assert int.from_bytes(png[20:24], "big") == 360
        print(f"warm image {warm_s:.2f} s")
    finally:
        r.close()
    assert not r.running


def _children(pid: int) -> list[int]:
    """Process ids whose parent is ``pid`` (Linux /proc)."""
    out = []
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            with open(f"/proc/{entry}/stat") as fh:
                fields = fh.read().rsplit(")", 1)[1].split()
        except OSError:
            continue
        if int(fields[1]) == pid:
            out.append(int(entry))
    return out


def _has_chromium_below(pid: int) -> bool:
    for child in _children(pid):
        try:
            with open(f"/proc/{child}/cmdline", "rb") as fh:
                cmd = fh.read()
        except OSError:
            continue
        if b"chrom" in cmd or _has_chromium_below(child):
            return True
    return False


@pytest.mark.parametrize("ready", ["1", "0"])
def test_each_worker_starts_its_chromium_at_start_when_set(chromium_path, tmp_path, ready):
    # REALBASIS_CHART_IMAGES_READY (pipeline/settings.py): every web worker has its
    # Chromium open before any image is asked for, so the first image takes the warm
    # time (about 0.5 s), not Chromium's start (seconds); off, none is started.
    import served

    server = served.start(tmp_path / "d", {"REALBASIS_CHART_IMAGES_READY": ready,
                                           "RB_CHROMIUM": chromium_path})
    try:
        workers = _children(server.proc.pid)
        assert len(workers) == 2
        deadline = time.monotonic() + (40 if ready == "1" else 8)
        while time.monotonic() < deadline:
            started = [w for w in workers if _has_chromium_below(w)]
            if ready == "1" and len(started) == 2:
                break
            time.sleep(0.5)
        assert len(started) == (2 if ready == "1" else 0)
    finally:
        server.stop()
