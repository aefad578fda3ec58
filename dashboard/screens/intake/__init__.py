"""Data intake: drop a file, see what was found, correct the reading, add it.

The file is size-checked on the server (the upload widget's own limit would drop a big
file silently), kept server-side under its SHA-256 and read by the engine's intake
(:func:`pipeline.ingest.read_file`) in a background job with a progress bar. The user
can correct the fiscal-year start and each series' kind; the file is then read again
with those choices. Adding puts the series into the workspace (the shared demo
workspace is never changed: adding there starts a new workspace).

``layout.py`` builds the page, ``callbacks.py`` registers the callbacks, ``view.py`` holds
the view model they call.
"""

from __future__ import annotations

from .callbacks import register
from .layout import layout

KEY = "intake"
"""Short id of the screen (the package's name): element ids, the address (#intake)."""
TITLE = "Data intake"
ORDER = 10
# Reviewers see this screen too, read-only: the part marked EDITOR_ONLY_CLASS (workspace
# choice, upload, corrections, adding) is hidden in their page by dashboard/access.py, and
# what the workspace holds (series, files added) is shown to everyone.

__all__ = ["KEY", "ORDER", "TITLE", "layout", "register"]
