"""The demo workspace: the illustrative files of demo_data/ read through the intake.

Built once into the workspace store the first time the dashboard opens without a
workspace (see :meth:`dashboard.data.DataAccess.demo_ref`). Everything in it is invented
(see demo_data/README.md) and the workspace notes say so.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

from pipeline.ingest import read_file
from pipeline.model import Workspace
from pipeline.store import WorkspaceStore

from .screens._shared.view import add_intake

DEMO_DIR = Path(__file__).resolve().parent.parent / "demo_data"

# (file, fiscal start month of its labels or None)
DEMO_FILES: tuple[tuple[str, int | None], ...] = (
    ("harbourline_revenue.csv", None),
    ("tallmere_program_spending.csv", 7),
    ("consumer_indexes.csv", None),
    ("chained_consumer_index_vintage_2026-04-15.csv", None),
    ("chained_consumer_index_vintage_2025-10-15.csv", None),
    ("chained_consumer_index_vintage_2025-04-15.csv", None),
    ("producer_index.csv", None),
    ("wage_index.csv", None),
    ("government_consumption_deflator.csv", None),
    ("construction_cost_index.csv", None),
    ("harbourline_cost_components.csv", None),
)

DEMO_NOTES = (
    "ILLUSTRATIVE DEMO. Harbourline Outfitters (a retailer) and the Tallmere Regional "
    "Transit Authority are fictional, and every number here, including the price indexes, "
    "is invented (see demo_data/README.md). Tallmere's fiscal year runs July to June; its "
    "FY2027-FY2030 amounts are proposed out-years, marked projected."
)

DEMO_SETTINGS = {
    "base": "2024",
    "deflator": "Chained consumer index",
    "deflators": ["Fixed-basket consumer index", "Chained consumer index",
                  "Producer index for apparel and outdoor goods", "Private-sector wage index",
                  "Government consumption deflator"],
    "series": "Apparel revenue",
}


def build_demo_workspace(store: WorkspaceStore, name: str, folder: Path = DEMO_DIR) -> Workspace:
    """Create and save the demo workspace in ``store``; returns the saved workspace."""
    ws = store.create(name, actor="demo")
    for filename, fy_start in DEMO_FILES:
        path = folder / filename
        if not path.exists():
            continue
        intake = read_file(path, fy_start=fy_start)
        intake.raise_for_errors()
        ws, _ = add_intake(ws, intake.series)
    settings: dict[str, object] = dict(DEMO_SETTINGS)
    weights = folder / "harbourline_cost_weights.csv"
    if weights.exists():  # prefills the own cost index builder on the shelf
        settings["cost_weights"] = weights.read_text(encoding="utf-8")
    ws = dataclasses.replace(ws, settings=settings, notes=DEMO_NOTES)
    return store.save(ws, expected_version=ws.version, actor="demo",
                      action="demo data loaded (illustrative)")
