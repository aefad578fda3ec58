"""Warm-up at worker start: the first visitor should not pay for a cold worker.

A new gunicorn worker has imported the dashboard but never run the engine's code paths,
never loaded a workspace and has an empty result cache; its first request used to take
seconds. :func:`start` runs, in a daemon thread of each worker, what a first visit needs:
the demo workspace loaded (into the per-worker workspace cache), and each screen's
``warm(rb, ws)`` (optional, beside the screen's callbacks) computing the view a first visit
to that screen asks for into the shared result cache (:mod:`dashboard.results`), so the
second worker finds it there. Requests are served meanwhile; one that arrives first
simply computes as it would have. A failure is logged and changes nothing.
Off with the demo (``REALBASIS_DEMO=0``) or the result cache (``REALBASIS_RESULT_CACHE_MB=0``).
"""

from __future__ import annotations

import logging
import threading
from typing import Any

log = logging.getLogger(__name__)


def warm_now(rb: Any) -> list[str]:
    """Warm ``rb`` (an AppContext) in this thread; the keys of the screens warmed."""
    ws = rb.data.load(rb.data.demo_ref())
    done = []
    for screen in rb.screens:
        fn = getattr(screen.module, "warm", None)
        if fn is None:
            continue
        try:
            fn(rb, ws)
            done.append(screen.key)
        except Exception:  # a warm-up must never stop a worker
            log.exception("warming screen %s failed", screen.key)
    return done


def start(rb: Any) -> threading.Thread | None:
    """Warm ``rb`` in a daemon thread (None when there is nothing to warm)."""
    if not rb.settings.demo or rb.results is None or not rb.results.enabled:
        return None

    def run() -> None:
        try:
            warm_now(rb)
        except Exception:
            log.exception("warm-up failed")

    thread = threading.Thread(target=run, name="realbasis-warm", daemon=True)
    thread.start()
    return thread
