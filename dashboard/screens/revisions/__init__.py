"""Revisions: two vintages of a price index and what moved in the real figures.

Uses :mod:`pipeline.revisions`: the index values revised between the vintages, then the
same series deflated with each vintage by the same method, period by period.

``layout.py`` builds the page, ``callbacks.py`` registers the callbacks, ``view.py`` holds
the view model they call.
"""

from __future__ import annotations

from ... import ids
from .callbacks import register
from .layout import layout

KEY = "revisions"
"""Short id of the screen (the package's name): element ids, the address (#revisions)."""
TITLE = "Revisions"
ORDER = 50

PARAMS = {"index": ids.RV_INDEX, "series": ids.RV_SERIES, "base": ids.RV_BASE}
"""Choices kept in the page address (#revisions?name=value...)."""

__all__ = ["KEY", "ORDER", "PARAMS", "TITLE", "layout", "register"]
