"""Real terms: one series (or a total) in nominal and constant dollars of a stated base.

The title states the base ("in constant 2024 dollars"); the growth table splits nominal
growth exactly into price and real growth; the preliminary stretch is shaded and the
projected stretch dashed; seasonal adjustment can be switched on (after deflation).

``layout.py`` builds the page, ``callbacks.py`` registers the callbacks, ``view.py`` holds
the view model they call.
"""

from __future__ import annotations

from ... import ids
from .callbacks import opening, register, warm
from .layout import layout

KEY = "real"
"""Short id of the screen (the package's name): element ids, the address (#real)."""
TITLE = "Real terms"
ORDER = 30

PARAMS = {"series": ids.RT_SERIES, "deflator": ids.RT_DEFLATOR, "base": ids.RT_BASE}
"""Choices kept in the page address (#real?name=value...)."""

__all__ = ["KEY", "ORDER", "PARAMS", "TITLE", "layout", "opening", "register", "warm"]
