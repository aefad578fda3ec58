"""Deflator spread: the same series under every chosen deflator.

Shows the band between the lowest and highest real values, real growth per deflator
(nominal growth split exactly into price and real growth) and a plain verdict on whether
the sign of real growth depends on the deflator.

``layout.py`` builds the page, ``callbacks.py`` registers the callbacks, ``view.py`` holds
the view model they call.
"""

from __future__ import annotations

from .callbacks import register
from .layout import layout

KEY = "spread"
TITLE = "Deflator spread"
ORDER = 40

__all__ = ["KEY", "ORDER", "TITLE", "layout", "register"]
