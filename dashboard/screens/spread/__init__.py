"""Deflator spread: the same series under every chosen deflator.

Shows the band between the lowest and highest real values, real growth per deflator
(nominal growth split exactly into price and real growth) and a plain verdict on whether
the sign of real growth depends on the deflator.

``layout.py`` builds the page, ``callbacks.py`` registers the callbacks, ``view.py`` holds
the view model they call.
"""

from __future__ import annotations

from ... import ids
from .callbacks import register
from .layout import layout

KEY = "spread"
"""Short id of the screen (the package's name): element ids, the address (#spread)."""
TITLE = "Deflator spread"
ORDER = 40

PARAMS = {"series": ids.SP_SERIES, "deflators": ids.SP_DEFLATORS, "base": ids.SP_BASE}
"""Choices kept in the page address (#spread?name=value...)."""

__all__ = ["KEY", "ORDER", "PARAMS", "TITLE", "layout", "register"]
