"""Chart images: one Chromium kept open per process for kaleido (``RENDERER``).

Starting Chromium is most of the cost of a chart image (about 3.5 s of 4 on the
development machine; a figure already in an open Chromium takes about 0.4 s), so the
dashboard keeps one open in each web process once an image is wanted and reuses it:

* :meth:`ChartImages.warm` starts it in the background (the Share and export screen
  calls it when it is drawn, so the first image rarely waits);
* :meth:`ChartImages.png` renders a figure dict through it, one at a time, with a time
  limit; a failure or a time-out closes it (the next image starts a fresh one);
* it closes itself after :data:`IDLE_SECONDS` without an image (the memory of an idle
  Chromium is given back), and at exit.

The browser runs kaleido's own asynchronous API (``kaleido.Kaleido``) on an event loop in
a daemon thread. ``RENDERER`` is the one module-level mutable object of the dashboard: it
holds a process (no workspace data, nothing a user sent) and belongs to the process that
started it: a forked child (a background job) sees another process id and starts its own
if it needs one, leaving the parent's alone (never closing or finalising it).
"""

from __future__ import annotations

import asyncio
import atexit
import contextlib
import os
import threading
from concurrent.futures import Future
from typing import Any

IDLE_SECONDS = 600.0
"""Seconds without an image after which the Chromium is closed."""
START_SECONDS = 15.0
"""Longest wait for Chromium to start."""
RENDER_SECONDS = 10.0
"""Longest wait for one image; with :data:`START_SECONDS` below gunicorn's ``--timeout``
(30 s), so a stuck Chromium is answered with EX103 rather than a killed worker."""


class ChartImages:
    """A Chromium kept open for kaleido in this process (see the module's notes)."""

    def __init__(self) -> None:
        self._lock = threading.Lock()
        self._pid: int | None = None
        self._path: str | None = None
        self._loop: asyncio.AbstractEventLoop | None = None
        self._browser: Future[Any] | None = None
        self._idle: asyncio.TimerHandle | None = None
        self._inherited: list[Any] = []  # a parent's objects, kept so nothing finalises them
        atexit.register(self.close)

    # ----- public

    def warm(self, path: str | None) -> None:
        """Start Chromium at ``path`` in the background unless it is open or starting."""
        if not path or not self._lock.acquire(blocking=False):
            return  # an image is being made: it is open already, or starting
        try:
            self._ensure(path)
        finally:
            self._lock.release()

    def png(self, figure: dict[str, Any], width: int, height: int, path: str) -> bytes:
        """The figure as PNG bytes, through the open Chromium (started if needed). Raises
        whatever kaleido raises, or ``TimeoutError``; the browser is closed then."""
        with self._lock:
            loop, browser = self._ensure(path)
            try:
                k = browser.result(START_SECONDS)
                made = asyncio.run_coroutine_threadsafe(
                    k.calc_fig(figure, opts={"format": "png", "width": width, "height": height}),
                    loop).result(RENDER_SECONDS)
            except BaseException:
                self._close_locked()
                raise
            loop.call_soon_threadsafe(self._schedule_idle_close, loop)
            return bytes(made)

    @property
    def running(self) -> bool:
        """Whether this process has a Chromium open or starting."""
        return self._pid == os.getpid() and self._browser is not None

    def close(self) -> None:
        """Close this process's Chromium (nothing happens in a process that did not
        start it)."""
        with self._lock:
            self._close_locked()

    # ----- inside

    def _ensure(self, path: str) -> tuple[asyncio.AbstractEventLoop, Future[Any]]:
        if self._pid is not None and self._pid != os.getpid():
            # forked: the thread and the browser are the parent's; keep them referenced
            self._inherited += [self._loop, self._browser]
            self._pid = self._loop = self._browser = self._idle = None
        if self._browser is not None and (self._path != path or (
                self._browser.done() and self._browser.exception() is not None)):
            self._close_locked()
        if self._loop is None:
            loop = asyncio.new_event_loop()
            threading.Thread(target=_run, args=(loop,), name="rb-chart-images",
                             daemon=True).start()
            self._loop, self._pid = loop, os.getpid()
        if self._browser is None:
            self._path = path
            self._browser = asyncio.run_coroutine_threadsafe(self._open(path), self._loop)
        return self._loop, self._browser

    @staticmethod
    async def _open(path: str) -> Any:
        import kaleido

        k = kaleido.Kaleido(path=path, n=1, timeout=RENDER_SECONDS, mathjax=False)
        await k.open()
        return k

    def _schedule_idle_close(self, loop: asyncio.AbstractEventLoop) -> None:  # on the loop
        if self._loop is not loop:
            return  # closed meanwhile
        if self._idle is not None:
            self._idle.cancel()
        self._idle = loop.call_later(IDLE_SECONDS, self._idle_close)

    def _idle_close(self) -> None:  # runs on the loop
        threading.Thread(target=self.close, daemon=True).start()

    def _close_locked(self) -> None:
        if self._pid != os.getpid() or self._loop is None:
            return
        loop, browser = self._loop, self._browser
        self._loop = self._browser = self._idle = None
        self._pid = None
        if browser is not None:
            async def shut() -> None:
                try:  # a browser still starting is awaited, then closed
                    k = await asyncio.wait_for(asyncio.wrap_future(browser), START_SECONDS)
                except BaseException:  # it never opened: nothing to close
                    return
                await k.close()

            with contextlib.suppress(Exception):  # closing a broken browser may fail; go on
                asyncio.run_coroutine_threadsafe(shut(), loop).result(START_SECONDS + 10)
        loop.call_soon_threadsafe(loop.stop)


def _run(loop: asyncio.AbstractEventLoop) -> None:
    asyncio.set_event_loop(loop)
    try:
        loop.run_forever()
    finally:
        loop.close()


RENDERER = ChartImages()
