"""How the dashboard says each remedy (:data:`pipeline.errors.REMEDIES`).

Engine problems carry a neutral ``fix`` and, where the remedy is a choice, a ``remedy``
key; the dashboard shows the fix followed by these words, which point at its own controls.
Nothing here names a command-line option or a Python argument (a test checks it).
"""

from __future__ import annotations

from collections.abc import Mapping

SCREEN: Mapping[str, str] = {
    "fiscal_start": "Choose the month under 'Fiscal year' on Data intake; it is saved with "
                    "the workspace.",
    "result_frequency": "Pick a longer period under 'Show as' (quarters, calendar or fiscal "
                        "years).",
    "interpolate": "Tick 'Fill in a less frequent deflator (Denton, keeping its period "
                   "averages)' beside the deflator, or choose a deflator at least as "
                   "frequent as the series.",
    "deflator_missing": "Choose a price index, or add one on Data intake.",
    "series_kind": "Correct the kind under 'Series to correct' on Data intake.",
    "sheet": "Pick the sheet under 'Sheet' on Data intake.",
    "weights_as": "Type the weights as shares that add up to 1 or 100 in each year.",
    "chained": "Choose a fixed-base method, or a chained Laspeyres, Fisher or Törnqvist.",
    "as_of": "Give the file a vintage column (the as-of date) and add it again.",
    "rebase_vintages": "Rebase both vintages to one period on the Deflator shelf first.",
    "sa_interpolate": "Fill the missing values in the file, or leave seasonal adjustment off.",
    "export_choices": "Choose series, deflator and base on Real terms or Deflator spread "
                      "and press 'Save these choices to the workspace'.",
    "projection_rate": "Type the rate in percent a year, e.g. 2.5.",
    "base_period": "Type another base period.",
    "project_index": "Extend the index on the Deflator shelf under 'Rebase or project an "
                     "index' (type the rate and 'Project until').",
}
