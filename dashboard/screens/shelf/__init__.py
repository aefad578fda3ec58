"""Deflator shelf: the price indexes of the workspace and what can be done with them.

Lists every index and vintage with its reference, span and preliminary/projected
stretches; draws chosen indexes; rebases, links two segments, projects out-years at an
assumed rate and blends an own cost index from components and yearly weights. Every
action calls the engine (pipeline.indexes, pipeline.projection, pipeline.costindex) and
adds a NEW index to the workspace, leaving the original as it was.

``layout.py`` builds the page, ``callbacks.py`` registers the callbacks, ``view.py`` holds
the view model they call.
"""

from __future__ import annotations

from ... import ids
from .callbacks import register
from .layout import layout

KEY = "shelf"
"""Short id of the screen (the package's name): element ids, the address (#shelf)."""
TITLE = "Deflator shelf"
ORDER = 20

PARAMS = {"index": ids.SH_INDEX}
"""Choices kept in the page address (#shelf?name=value...)."""

__all__ = ["KEY", "ORDER", "PARAMS", "TITLE", "layout", "register"]
