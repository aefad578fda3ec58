"""Options shared by every command that reads files through the intake.

``--kind NAME=flow|stock|index`` (repeatable) sets a series' kind; ``--marker
LETTER=final|preliminary|projected`` (repeatable) says what a status letter beside a value
means (defaults: p and e preliminary, f projected, r final, or the file's own legend);
``--daily-to-months`` aggregates dates finer than months to months."""

from __future__ import annotations

import argparse
from collections.abc import Sequence

from pipeline.errors import CL001, fail
from pipeline.model import KINDS, STATUSES

KIND_HELP = ("set a series' kind instead of the file's role or the guess: NAME=flow, "
             "NAME=stock or NAME=index (repeatable)")


def add_reading_arguments(p: argparse.ArgumentParser, *, kind: bool = True) -> None:
    if kind:
        p.add_argument("--kind", action="append", metavar="NAME=KIND", help=KIND_HELP)
    p.add_argument("--marker", action="append", metavar="LETTER=STATUS",
                   help="what a status letter beside a value means (312.5p): LETTER=final, "
                        "=preliminary or =projected; defaults p, e preliminary, f projected, "
                        "r final, or the file's own legend (repeatable)")
    p.add_argument("--daily-to-months", dest="daily", action="store_true",
                   help="aggregate dates finer than months (daily, weekly) to months: flows "
                        "summed, stocks at the month's last date, indexes averaged")


def parse_kinds(items: Sequence[str] | None) -> dict[str, str]:
    """NAME=KIND items as a dict (CL001 for a malformed one)."""
    out: dict[str, str] = {}
    for item in items or ():
        name, sep, kind = item.rpartition("=")
        if not sep or not name.strip() or kind.strip() not in KINDS:
            raise fail(CL001, "--kind takes NAME=flow, NAME=stock or NAME=index",
                       expected="NAME=flow|stock|index, e.g. --kind 'Cash balance=stock'",
                       found=repr(item), fix="Write the series name, '=', then the kind.")
        out[name.strip()] = kind.strip()
    return out


def parse_markers(items: Sequence[str] | None) -> dict[str, str]:
    """LETTER=STATUS items as a dict (CL001 for a malformed one)."""
    out: dict[str, str] = {}
    for item in items or ():
        letter, sep, status = item.partition("=")
        letter, status = letter.strip().lower(), status.strip().lower()
        if not sep or len(letter) != 1 or not letter.isalpha() or status not in STATUSES:
            raise fail(CL001, "--marker takes LETTER=final, LETTER=preliminary or "
                       "LETTER=projected", expected="e.g. --marker r=preliminary",
                       found=repr(item), fix="Write one letter, '=', then the status.")
        out[letter] = status
    return out
