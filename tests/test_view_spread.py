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
    _s_opts, series, _interp = view.options_for(demo, None, None)
    assert series == demo.settings["series"]
    _d, chosen, _why = view.deflator_picker(demo, series, ["Chained consumer index", "gone"],
                                            "2024", "auto", [])
    assert chosen == ["Chained consumer index"]  # kept while it exists, the rest dropped
    saved = dataclasses.replace(demo, settings={**demo.settings,
                                                "deflators": ["Fixed-basket consumer index"]})
    assert view.deflator_picker(saved, series, ["gone"], "2024", "auto", [])[1] == [
        "Fixed-basket consumer index"]
    bare = dataclasses.replace(demo, settings={})
    first = view.deflator_picker(bare, "Rail operations", None, "FY2025", "auto", [])
    offered = [o["value"] for o in first[0] if not o.get("disabled")]
    assert first[1] == offered[:5] and "Construction cost index" not in first[1]


def test_a_deflator_that_cannot_serve_is_left_out_and_named(demo: Workspace):
    """One unusable deflator no longer stops the comparison: the calendar-year
    construction cost index does not nest with July fiscal years; it is left out, named
    with the reason, and the verdict is over the other two."""
    verdict, title, _fig, growth, _warn, method = view.outputs(
        demo, "Rail operations", ["Construction cost index", "Chained consumer index",
                                  "Government consumption deflator"], "FY2025", "auto", "cagr")
    text = str(verdict.to_plotly_json())
    assert "of 2 deflators" in text  # the verdict is over the two that serve
    assert "Left out: Construction cost index (serves only if interpolated" in text
    assert "To use Construction cost index: Allow interpolation" in text
    assert "Tick 'Fill in a less frequent deflator" in text
    assert "--" not in text  # no command-line option on the screen
    assert "under 2 deflator(s)" in title
    assert "Construction cost index" not in str(growth.to_plotly_json())
    assert "The verdict is over the other deflators" in str(method.to_plotly_json())
    # interpolation allowed: all three serve
    verdict, title, *_ = view.outputs(
        demo, "Rail operations", ["Construction cost index", "Chained consumer index",
                                  "Government consumption deflator"], "FY2025", "auto", "cagr",
        interpolate=["denton"])
    assert "under 3 deflator(s)" in title
    # none can serve: a coded problem per deflator, with this screen's words
    verdict, title, _f, _g, warn, _m = view.outputs(
        demo, "Rail operations", ["Construction cost index"], "FY2025", "auto", "cagr")
    assert "none of the chosen deflators" in str(verdict.to_plotly_json())
    assert "DF040" in str(warn.to_plotly_json())
