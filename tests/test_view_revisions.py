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


def test_revisions_screen_shows_the_band_of_the_later_vintage(demo: Workspace):
    # The demo holds four vintages of the chained consumer index (illustrative), so the
    # past revisions by age give a band (pipeline.revision_risk) for the index and for the
    # real figures of the chosen series resting on its preliminary values.
    fig, section = view.band_outputs(demo, "Chained consumer index", "2026-10-15",
                                     "Apparel revenue", "2024")
    names = [tr.name for tr in fig.data]
    assert "Chained consumer index (vintage 2026-10-15)" in names
    assert "Apparel revenue, real (constant 2024 dollars)" in names
    bands = [tr for tr in fig.data if tr.fill == "tonexty"]
    assert len(bands) == 2  # the index band and the real band
    assert "constant 2024 dollars" in fig.layout.title.text
    shown = str(section.to_plotly_json())
    assert "past revisions of this index would put it between" in shown
    assert "Apparel revenue: real growth 2026-09 on 2025-09" in shown
    assert "Index band" in shown and "Real band of Apparel revenue" in shown
    assert "28 past revision(s)" in shown and "10 % and 90 % quantiles" in shown


def test_revisions_screen_says_why_there_is_no_band(demo: Workspace):
    import dataclasses

    # an earlier vintage has too few revisions behind it (WS310), said in plain words
    fig, section = view.band_outputs(demo, "Chained consumer index", "2025-10-15",
                                     "Apparel revenue", "2024")
    assert not [tr for tr in fig.data if tr.fill == "tonexty"]
    assert "a band needs at least 8" in str(section.to_plotly_json())
    # one vintage: no band, and the note says why
    vins = demo.indexes["Chained consumer index"]
    one = dataclasses.replace(demo, indexes={**demo.indexes, "Chained consumer index":
                                             {"2026-10-15": vins["2026-10-15"]}})
    fig, section = view.band_outputs(one, "Chained consumer index", "2026-10-15",
                                     "Apparel revenue", "2024")
    assert "one vintage only" in str(section.to_plotly_json())
    assert view.band_outputs(demo, None, None, None, None)[1] is None
