"""Budget table: every program by (fiscal) year in then-year and constant dollars.

The programs of the workspace side by side by year — then-year dollars (as appropriated
or proposed), constant dollars of the chosen base year, real growth on the previous year
and the compound annual rate over the span — with totals, the proposed out-years marked
projected, each program's outlay rates (authority spent over several years) and the
conversion the other way (amounts given in constant dollars turned into then-year
dollars). The numbers come from the engine (:func:`pipeline.workbook.workspace_budget`
-> :func:`pipeline.budget.budget_table`), the same as the audit workbook's Budget sheet;
downloads (CSV, workbook) are background jobs.

``layout.py`` builds the page, ``callbacks.py`` registers the callbacks, ``view.py`` holds
the view model they call.
"""

from __future__ import annotations

from ... import ids
from .callbacks import register
from .layout import layout

KEY = "budget"
"""Short id of the screen (the package's name): element ids, the address (#budget)."""
TITLE = "Budget table"
ORDER = 35

PARAMS = {"programs": ids.BT_PROGRAMS, "deflator": ids.BT_DEFLATOR, "base": ids.BT_BASE}
"""Choices kept in the page address (#budget?name=value...)."""

__all__ = ["KEY", "ORDER", "PARAMS", "TITLE", "layout", "register"]
