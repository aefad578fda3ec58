"""The Deflator spread screen's view model (dashboard/screens/spread/view.py), without a
browser. The spread computation itself is tested with the shared view model
(tests/test_view_shared.py); the demo data is used only to exercise the screen.
"""

from __future__ import annotations

import dataclasses

from dashboard.screens.spread import view
from pipeline.model import Workspace


def test_spread_screen_outputs(demo: Workspace):
    verdict, title, fig, _growth, _warn, _method = view.outputs(
        demo, "Rail operations", ["Fixed-basket consumer index", "Chained consumer index",
                                  "Government consumption deflator"], "FY2025", "auto", "cagr")
    assert "constant FY2025 dollars" in title
    assert "deflator" in str(verdict.to_plotly_json())
    band = [t for t in fig.data if getattr(t, "fill", None) == "tonexty"]
    assert band, "the band between the deflators is drawn"
    verdict, *_ = view.outputs(demo, "Rail operations", [], "FY2025", "auto", "cagr")
    assert "Choose a series" in str(verdict.to_plotly_json())


def test_deflator_choices_follow_the_current_then_the_saved_then_the_first_five(
        demo: Workspace):
    s_opts, series, d_opts, chosen = view.options_for(demo, None, ["Chained consumer index",
                                                                   "gone"])
    assert series == demo.settings["series"]
    assert chosen == ["Chained consumer index"]  # kept while offered, the rest dropped
    saved = dataclasses.replace(demo, settings={**demo.settings,
                                                "deflators": ["Fixed-basket consumer index"]})
    assert view.options_for(saved, None, ["gone"])[3] == ["Fixed-basket consumer index"]
    bare = dataclasses.replace(demo, settings={})
    assert view.options_for(bare, None, None)[3] == [o["value"] for o in d_opts[:5]]
    assert view.options_for(bare, None, None)[1] == s_opts[0]["value"]
