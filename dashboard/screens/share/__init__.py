"""Share and export: downloads, reviewer links and the audit trail.

Downloads (audit workbook, CSV, JSON) are written by the same engine path as the command
line (:func:`pipeline.workbook.export_workspace` -> :func:`pipeline.export.write_result`)
from the workspace's saved choices, so an editor and a reviewer get the same file. They
run as background jobs (diskcache, or Celery with Redis). The chart image is the
deflator-spread chart rendered by kaleido through the system Chromium.

Reviewer links are created, listed and revoked here by editors; a reviewer sees the
downloads and the audit trail only. The panel is hidden for reviewers for clarity, but the
store refuses link changes under a reviewer link whatever the page shows.

``layout.py`` builds the page, ``callbacks.py`` registers the callbacks, ``view.py`` holds
the view model they call.
"""

from __future__ import annotations

from .callbacks import register
from .layout import layout

KEY = "share"
"""Short id of the screen (the package's name): element ids, the address (#share)."""
TITLE = "Share and export"
ORDER = 60

__all__ = ["KEY", "ORDER", "TITLE", "layout", "register"]
