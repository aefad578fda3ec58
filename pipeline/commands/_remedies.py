"""How the command line says each remedy (:data:`pipeline.errors.REMEDIES`).

Engine problems carry a neutral ``fix`` and, where the remedy is a choice, a ``remedy``
key; the command line prints the fix followed by these words, which name its options.
The dashboard has its own words for the same keys (``dashboard.remedies``). Nothing here
names a screen.
"""

from __future__ import annotations

from collections.abc import Mapping

CLI: Mapping[str, str] = {
    "fiscal_start": "Pass --fiscal-start with the month number (e.g. --fiscal-start 7 "
                    "for a July start; --fy-start 7 in realbasis index).",
    "result_frequency": "Pass --to with a longer period (--to Q, --to A or --to FY).",
    "interpolate": "Pass --interpolate to fill in the less frequent deflator (Denton, "
                   "keeping its period averages; --interpolate linear for straight lines).",
    "deflator_missing": "Pass one or more --index FILE.",
    "series_kind": "Pass --kind flow or --kind stock (or --kind NAME=flow|stock|index).",
    "sheet": "Pass --sheet NAME (realbasis check lists the sheets).",
    "weights_as": "Pass --weights-as amounts or --weights-as shares.",
    "chained": "Leave out --chained, or pass --formula laspeyres, fisher or tornqvist.",
    "as_of": "Give the file a vintage column, or pass --old-as-of / --new-as-of.",
    "rebase_vintages": "Pass --rebase PERIOD.",
    "sa_interpolate": "Pass --sa-interpolate.",
    "export_choices": "Pass --base PERIOD and --deflator NAME (and --series NAME).",
    "projection_rate": "Pass --rate 2.5% (or --rate 0.025); per year: --rate FY2027=3%.",
    "base_period": "Pass another --base.",
    "project_index": "Extend the index first with realbasis index project (--rate, --until).",
}


def render(problem: object) -> str:
    """A problem (or a RealbasisError) as the command line prints it."""
    return problem.render(CLI)  # type: ignore[attr-defined]
