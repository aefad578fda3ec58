"""The Revisions screen's view model (dashboard/screens/revisions/view.py), without a
browser. The change shown is later minus earlier, period by period (pipeline.revisions);
the demo data is used only to exercise the screen.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from dashboard.screens.revisions import view
from pipeline.errors import RealbasisError
from pipeline.model import Workspace


def test_revisions_screen_reports_what_moved(demo: Workspace):
    _opts, old, new = view.vintages_for(demo, "Chained consumer index")
    assert (old, new) == ("2026-04-15", "2026-10-15")
    rv = view.revisions(demo, "Chained consumer index", old, new, "Apparel revenue", "2024")
    assert rv.comparison.revised > 0
    moved = pd.DataFrame(rv.moved)
    # the change shown is later minus earlier, period by period (pipeline.revisions)
    assert np.allclose(moved["real_change"], moved["real_new"] - moved["real_old"])
    summary, _fig, moved_table, _warn, _method = view.outputs(demo, "Chained consumer index", old,
                                                           new, "Apparel revenue", "2024")
    assert "moved" in str(summary.to_plotly_json())
    assert "2026-03" in str(moved_table.to_plotly_json())
    with pytest.raises(RealbasisError):
        view.revisions(demo, "Chained consumer index", new, new, "Apparel revenue", "2024")
