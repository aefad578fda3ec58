"""Revisions: two vintages of a price index and what moved in the real figures.

Uses :mod:`pipeline.revisions`: the index values revised between the vintages, then the
same series deflated with each vintage by the same method, period by period.

``layout.py`` builds the page, ``callbacks.py`` registers the callbacks, ``view.py`` holds
the view model they call.
"""

from __future__ import annotations

from .callbacks import register
from .layout import layout

KEY = "revisions"
TITLE = "Revisions"
ORDER = 50

__all__ = ["KEY", "ORDER", "TITLE", "layout", "register"]
