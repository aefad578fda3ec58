"""Benchmark: the server-side cost of the dashboard's long actions on the demo workspace.

Each action is timed in one process, calling what its callback calls (the screen's view
functions and the engine), without a browser and without the other screens' callbacks
that a workspace change sets off (those are the wiring's cost, measured in a browser by
bench_browser.py). On the illustrative demo (dashboard/demo.py):

  link_s          Deflator shelf: link two indexes and save (view.run_action "link")
  own_index_s     Deflator shelf: a chained Törnqvist own cost index from four components
  shelf_s         the shelf's table and chart for the new version (what the user then sees)
  read_s, add_s   Data intake: read a dropped 4-series CSV (the job's work), then add it
  workbook_s      Share and export: the audit workbook of the demo (view.export_file)
  sa_first_s      Real terms: the first seasonally adjusted screen in a fresh process
                  after pipeline.seasonal.preload() (as a gunicorn worker starts);
                  sa_first_cold_s the same without the preload (before), sa_s a later one
  png_s           Share and export: the chart image through the Chromium kept open
                  (dashboard.images); png_first_s the first one (starts Chromium);
                  png_oneshot_s a new Chromium for the image (what every image cost before)

Baseline in the same run: ``baseline_s`` is the Real terms screen without seasonal
adjustment (the usual switch), ``figure_s`` the chart figure alone before it is drawn.
Target: each action <= 1 s, or a background job with progress and Cancel.
Run: ``python tests/benchmarks/bench_actions.py`` (RB_CHROMIUM for the Chromium).
"""

from __future__ import annotations

import base64
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1].parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

COMPONENTS = ["Goods purchased", "Wages and benefits", "Rent and occupancy", "Freight and energy"]

SA_CHILD = """
import sys, time, tempfile
sys.path.insert(0, {root!r})
from pathlib import Path
from dashboard.data import DataAccess
from dashboard.screens.real import view
from dashboard.screens._shared.view import shown_base
from pipeline.settings import Settings
if {preload!r}:
    from pipeline.seasonal import preload
    preload()
data = DataAccess(Settings(data_dir=tempfile.mkdtemp()))
ws = data.latest(data.demo_ref().id)
_, series, interp = view.options_for(ws, None)
base = shown_base(ws, None)
_, defl, _ = view.deflator_picker(ws, series, None, base, "auto", interp, None)
view.screen_outputs(ws, series, defl, base, "auto", False, interpolate=interp)
t = time.perf_counter()
view.screen_outputs(ws, series, defl, base, "auto", True, interpolate=interp)
print(time.perf_counter() - t)
"""


def timed(fn, *args, **kw):
    t = time.perf_counter()
    out = fn(*args, **kw)
    return time.perf_counter() - t, out


def sa_first(preload: bool) -> float:
    out = subprocess.run([sys.executable, "-c", SA_CHILD.format(root=str(ROOT), preload=preload)],
                         capture_output=True, text=True, check=True, cwd=ROOT)
    return float(out.stdout.strip().splitlines()[-1])


def main() -> None:
    from bench_browser import upload_file, weights_text

    from dashboard.data import DataAccess
    from dashboard.images import RENDERER
    from dashboard.screens._shared.view import shown_base
    from dashboard.screens.intake import view as intake
    from dashboard.screens.real import view as real
    from dashboard.screens.share import view as share
    from dashboard.screens.shelf import view as shelf
    from pipeline.settings import Settings

    tmp = Path(tempfile.mkdtemp(prefix="rb-bench-actions-"))
    figures: dict[str, float] = {}
    try:
        data = DataAccess(Settings(data_dir=str(tmp / "data")))
        ref = data.demo_ref()
        demo = data.load(ref)
        shelf.outputs(demo, None)  # imports and caches out of the way

        figures["link_s"], (ref2, _m, _n) = timed(
            shelf.run_action, data, ref, "link", old="Fixed-basket consumer index",
            new="Chained consumer index", overlap=None)
        figures["own_index_s"], (ref3, _m, _n) = timed(
            shelf.run_action, data, ref2, "cost", cost_name="Benchmark cost index",
            components=COMPONENTS, weights=weights_text(), method="tornqvist")
        assert ref3 is not None, "the own index was not built"
        figures["shelf_s"], _ = timed(shelf.outputs, data.load(ref3), None)

        raw = upload_file(tmp).read_bytes()
        pending, _ = intake.receive(data, "data:text/csv;base64," + base64.b64encode(raw).decode(),
                                    "bench.csv")
        figures["read_s"], _ = timed(intake.interpret, data, pending, 0, {})
        figures["add_s"], (added, _m, _s) = timed(intake.add_with_summary, data, ref, pending,
                                                  0, {})
        assert added is not None, "the file was not added"

        runs = [timed(share.export_file, demo, "xlsx", data.store)[0] for _ in range(3)]
        figures["workbook_s"] = statistics.median(runs)

        _, series, interp = real.options_for(demo, None)
        base = shown_base(demo, None)
        _, defl, _ = real.deflator_picker(demo, series, None, base, "auto", interp, None)
        real.screen_outputs(demo, series, defl, base, "auto", True, interpolate=interp)
        figures["baseline_s"] = statistics.median(
            timed(real.screen_outputs, demo, series, defl, base, "auto", False,
                  interpolate=interp)[0] for _ in range(3))
        figures["sa_s"] = statistics.median(
            timed(real.screen_outputs, demo, series, defl, base, "auto", True,
                  interpolate=interp)[0] for _ in range(3))
        figures["sa_first_cold_s"] = sa_first(False)
        figures["sa_first_s"] = sa_first(True)

        chromium = share.chromium_path()
        try:
            import kaleido
        except ImportError:
            kaleido = None
        if chromium and kaleido is not None:
            figures["figure_s"], fig = timed(share.chart_figure, demo)
            RENDERER.close()
            figures["png_first_s"], _ = timed(share.chart_png, demo)
            figures["png_s"] = statistics.median(timed(share.chart_png, demo)[0]
                                                 for _ in range(3))
            RENDERER.close()
            figures["png_oneshot_s"], _ = timed(
                kaleido.calc_fig_sync, fig.to_dict(),
                opts={"format": "png", "width": 1200, "height": 675}, kopts={"path": chromium})
        else:
            print("note: no kaleido or Chromium: the chart image is not timed")
    finally:
        RENDERER.close()
        shutil.rmtree(tmp, ignore_errors=True)

    load = os.getloadavg()[0]
    print(f"demo workspace; load average {load:.1f} on {os.cpu_count()} cores")
    keys = ("link_s", "own_index_s", "shelf_s", "read_s", "add_s", "workbook_s", "sa_first_s",
            "sa_first_cold_s", "sa_s", "png_first_s", "png_s", "png_oneshot_s", "figure_s",
            "baseline_s")
    print(" ".join(f"{k}={figures[k]:.3f}" for k in keys if k in figures))


if __name__ == "__main__":
    main()
