"""Twenty reviewers at once against `gunicorn` with two workers on the demo workspace.

One real reviewer page load is recorded in Chromium (Playwright, the system Chromium):
the page, its layout and dependencies, and every callback request the page sends while
it opens (bodies as the renderer wrote them). Then 20 clients, each with its own reviewer
session (``/review/<token>``), replay that page load over and over for 60 s; every
request's latency is measured. Baseline in the same run: the same 20 clients asking for
``/_dash-dependencies`` (through the same access gate and reviewer check, no computing)
for 15 s.

    python tests/benchmarks/bench_load.py [--seconds 60] [--baseline-seconds 15] [--clients 20]

Last line: ``p50_ms=… p95_ms=… errors=…`` (errors: answers other than 200/204, and
failed requests). Timing figures vary with the machine's load.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import threading
import time
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[2]
sys.path[:0] = [str(ROOT), str(ROOT / "tests")]

import requests  # noqa: E402
import served  # noqa: E402

ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--no-first-run"]


def record(url: str, token: str, chromium: str) -> list[tuple[str, str, bytes | None]]:
    """The requests one reviewer page load sends: (method, path, body)."""
    from playwright.sync_api import sync_playwright

    seen: list[tuple[str, str, bytes | None]] = []

    def on_request(r: Any) -> None:
        path = r.url[len(url):]
        if path.startswith(("/_dash-update-component", "/_dash-layout", "/_dash-dependencies")) \
                or path in ("/", ""):
            seen.append((r.method, path.split("?")[0] or "/", r.post_data_buffer))

    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=chromium, args=ARGS)
        page = browser.new_page()
        page.goto(f"{url}/review/{token}")
        page.on("request", on_request)
        page.reload()
        page.wait_for_selector("#rb-workspace-label strong", timeout=120_000)
        page.wait_for_load_state("networkidle")
        page.wait_for_timeout(3000)
        browser.close()
    return seen


def hammer(url: str, token: str, plan: list[tuple[str, str, bytes | None]], clients: int,
           seconds: float) -> tuple[list[float], int, int]:
    """``clients`` reviewers replaying ``plan`` for ``seconds``: latencies (ms), errors,
    page loads completed."""
    latencies: list[float] = []
    errors = [0]
    loads = [0]
    lock = threading.Lock()
    stop = time.monotonic() + seconds

    def client() -> None:
        s = requests.Session()
        s.get(f"{url}/review/{token}", timeout=60)
        mine: list[float] = []
        bad = done = 0
        while time.monotonic() < stop:
            for method, path, body in plan:
                t0 = time.perf_counter()
                try:
                    r = s.request(method, url + path, data=body, timeout=120, headers={
                        "Content-Type": "application/json"} if body else {})
                    ok = r.status_code in (200, 204)
                except requests.RequestException:
                    ok = False
                mine.append((time.perf_counter() - t0) * 1000)
                bad += not ok
                if time.monotonic() >= stop:
                    break
            else:
                done += 1
        with lock:
            latencies.extend(mine)
            errors[0] += bad
            loads[0] += done

    threads = [threading.Thread(target=client) for _ in range(clients)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    return latencies, errors[0], loads[0]


def pct(values: list[float], q: float) -> float:
    if not values:
        return float("nan")
    return statistics.quantiles(values, n=100, method="inclusive")[int(q) - 1]


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--seconds", type=float, default=60)
    ap.add_argument("--baseline-seconds", type=float, default=15)
    ap.add_argument("--clients", type=int, default=20)
    ap.add_argument("--chromium", default="/usr/bin/chromium")
    a = ap.parse_args()

    from dashboard.data import DataAccess
    from pipeline.settings import Settings

    with tempfile.TemporaryDirectory() as tmp:
        data_dir = Path(tmp) / "data"
        data = DataAccess(Settings(data_dir=str(data_dir)))
        ref = data.demo_ref()
        token, _ = data.store.create_link(ref.id, label="load test")
        server = served.start(data_dir, {"REALBASIS_LOCAL_EDITING": "1"})
        try:
            plan = record(server.url, token, a.chromium)
            posts = sum(1 for m, _, _ in plan if m == "POST")
            print(f"page_requests={len(plan)} callbacks={posts}", flush=True)
            base, base_err, _ = hammer(server.url, token, [("GET", "/_dash-dependencies", None)],
                                       a.clients, a.baseline_seconds)
            print(f"baseline_requests={len(base)} baseline_p50_ms={pct(base, 50):.1f} "
                  f"baseline_p95_ms={pct(base, 95):.1f} baseline_errors={base_err}", flush=True)
            lat, err, loads = hammer(server.url, token, plan, a.clients, a.seconds)
            print(f"clients={a.clients} seconds={a.seconds:g} requests={len(lat)} "
                  f"page_loads={loads} requests_per_s={len(lat) / a.seconds:.1f}", flush=True)
            log = server.log_text()
            tracebacks = log.count("Traceback")
            print(f"server_tracebacks={tracebacks}", flush=True)
        finally:
            server.stop()
            data.store.close()
    print(f"p50_ms={pct(lat, 50):.1f} p95_ms={pct(lat, 95):.1f} errors={err}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
