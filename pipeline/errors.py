"""One error vocabulary for the whole of realbasis.

Every user-facing problem is a :class:`Problem` with a stable code, what was expected,
what was found, where (file, sheet, row, column) and how to fix it. Problems that stop the
work are raised inside a :class:`RealbasisError` (one or many problems at once); problems
that do not stop it travel with results as warnings (``severity="warning"``).

Codes are registered once with :func:`register` by the module that raises them, so
``realbasis codes`` (and the test that checks uniqueness) can list them all. A code never
changes meaning once released; retire a code rather than reuse it.

**Fixes fit the face that shows them.** The engine serves two faces, the command line and
the dashboard, and a fix must name what the user can act on *there*: an option on the
command line, a control on a screen. So a problem's ``fix`` is written in neutral words
(no option names, no screen names), and where the remedy is a choice each face offers in
its own way the problem also carries a ``remedy`` key (one of :data:`REMEDIES`; several
keys separated by spaces when more than one choice helps). Each
face renders those keys in its own words (``pipeline.commands.remedies.CLI`` for the command
line, ``dashboard.remedies.SCREEN`` for the dashboard) and falls back to ``fix``. Exports
are the same file whichever face wrote them, so they carry the neutral ``fix``.

Code prefixes by area (three digits follow):
    IN  intake (reading files)          PE  periods and calendars
    IX  index operations (rebase, link) DF  deflation
    GR  growth                          SA  seasonal adjustment
    WS  index workshop (index numbers, own cost index, vintages, projection)
    ST  storage and workspaces          SH  sharing and reviewer access
    EX  exports                         CL  command line
    UI  dashboard-only problems         SE  settings
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field
from typing import Literal

Severity = Literal["error", "warning"]

_CODE_RE = re.compile(r"^(IN|PE|IX|DF|GR|SA|WS|ST|SH|EX|CL|UI|SE)\d{3}$")
_REGISTRY: dict[str, str] = {}


def register(code: str, title: str) -> str:
    """Register a stable error/warning code with a short title and return the code.

    Called at import time by the module that owns the code. Registering the same code
    twice with a different title is a programming error.
    """
    if not _CODE_RE.match(code):
        raise ValueError(f"malformed problem code {code!r}; expected e.g. 'IN001'")
    old = _REGISTRY.get(code)
    if old is not None and old != title:
        raise ValueError(f"problem code {code} already registered as {old!r}")
    _REGISTRY[code] = title
    return code


def registered_codes() -> Mapping[str, str]:
    """All codes registered so far (import the modules first to see theirs)."""
    return dict(sorted(_REGISTRY.items()))


REMEDIES: Mapping[str, str] = {
    "fiscal_start": "say which month the fiscal year starts in",
    "result_frequency": "choose the frequency of the results (a longer period than the series)",
    "interpolate": "allow interpolation of a less frequent deflator",
    "deflator_missing": "give one or more price indexes to deflate by",
    "series_kind": "say whether a series is a flow, a stock or a price index",
    "sheet": "choose the workbook sheet",
    "weights_as": "say whether the weights are shares or spending amounts",
    "chained": "choose fixed-base or chained",
    "as_of": "give each index load its as-of date (vintage)",
    "rebase_vintages": "rebase both vintages to one reference period",
    "sa_interpolate": "allow seasonal adjustment to fill inside gaps",
    "export_choices": "choose and save the base period, series and deflators to export",
    "projection_rate": "give the assumed annual rate",
    "base_period": "choose another base period",
    "project_index": "project the index over the missing periods",
}
"""Remedy keys a problem may carry, with what each asks of the user in neutral words.
Every face renders every key (a test checks the command line's and the dashboard's
vocabularies cover them all)."""


def remedy_keys(remedy: str) -> tuple[str, ...]:
    """The keys of a problem's ``remedy``: one key, or several separated by spaces when
    more than one choice would help (``"result_frequency interpolate"``)."""
    return tuple(remedy.split())


def fix_text(problem: Problem, vocabulary: Mapping[str, str] | None = None) -> str:
    """The fix as one face shows it: the neutral ``fix`` followed by the face's words for
    each of the problem's remedies (how to do it there), when the face has them."""
    vocab = vocabulary or {}
    words = [vocab.get(k, "") for k in remedy_keys(problem.remedy)]
    return " ".join(t for t in (problem.fix, *words) if t)


@dataclass(frozen=True)
class Location:
    """Where a problem sits. Rows are 1-based as a spreadsheet user counts them
    (the header is row 1 of a CSV); columns are header names where there is one.
    ``line`` is the 1-based line of typed text (a table pasted into a box rather than a
    file: no file name, no row)."""

    file: str | None = None
    sheet: str | None = None
    row: int | None = None
    column: str | None = None
    series: str | None = None
    period: str | None = None
    line: int | None = None

    def render(self) -> str:
        parts = []
        if self.line is not None:
            parts.append(f"line {self.line}")
        if self.file:
            parts.append(f"file {self.file}")
        if self.sheet:
            parts.append(f"sheet {self.sheet}")
        if self.row is not None:
            parts.append(f"row {self.row}")
        if self.column:
            parts.append(f"column {self.column!r}")
        if self.series:
            parts.append(f"series {self.series!r}")
        if self.period:
            parts.append(f"period {self.period}")
        return ", ".join(parts)

    def as_dict(self) -> dict[str, object]:
        return {k: v for k, v in self.__dict__.items() if v is not None}


@dataclass(frozen=True)
class Problem:
    """One thing wrong (or worth knowing) about the input or the result."""

    code: str
    message: str
    expected: str = ""
    found: str = ""
    fix: str = ""
    where: Location = field(default_factory=Location)
    severity: Severity = "error"
    remedy: str = ""  # a key of REMEDIES, or several separated by spaces

    def __post_init__(self) -> None:
        unknown = [k for k in remedy_keys(self.remedy) if k not in REMEDIES]
        if unknown:
            raise ValueError(f"unknown remedy {unknown[0]!r}; add it to errors.REMEDIES")

    def render(self, vocabulary: Mapping[str, str] | None = None) -> str:
        """One readable paragraph: code, where, what, expected/found, fix (in the words of
        ``vocabulary``, a face's rendering of remedy keys, when given)."""
        head = f"[{self.code}] {self.message}"
        loc = self.where.render()
        lines = [head + (f" ({loc})" if loc else "")]
        if self.expected:
            lines.append(f"  expected: {self.expected}")
        if self.found:
            lines.append(f"  found: {self.found}")
        fix = fix_text(self, vocabulary)
        if fix:
            lines.append(f"  fix: {fix}")
        return "\n".join(lines)

    def as_dict(self) -> dict[str, object]:
        return {
            "code": self.code,
            "severity": self.severity,
            "message": self.message,
            "expected": self.expected,
            "found": self.found,
            "fix": self.fix,
            "remedy": self.remedy,
            "where": self.where.as_dict(),
        }

    def as_warning(self) -> Problem:
        return dataclasses.replace(self, severity="warning")


class RealbasisError(Exception):
    """Raised for bad input or a request that cannot be met. Carries one or more problems.

    ``str(err)`` is the full human-readable text; ``err.code`` the first problem's code.
    """

    def __init__(self, problems: Problem | Iterable[Problem]):
        if isinstance(problems, Problem):
            problems = (problems,)
        self.problems: tuple[Problem, ...] = tuple(problems)
        if not self.problems:
            raise ValueError("RealbasisError needs at least one problem")
        super().__init__(self.render())

    @property
    def code(self) -> str:
        return self.problems[0].code

    @property
    def codes(self) -> tuple[str, ...]:
        return tuple(p.code for p in self.problems)

    def render(self, vocabulary: Mapping[str, str] | None = None) -> str:
        return "\n".join(p.render(vocabulary) for p in self.problems)


def fail(
    code: str,
    message: str,
    *,
    expected: str = "",
    found: str = "",
    fix: str = "",
    remedy: str = "",
    where: Location | None = None,
    **where_kw: object,
) -> RealbasisError:
    """Build (not raise) a single-problem error: ``raise fail("DF001", ...)``."""
    loc = where if where is not None else Location(**where_kw)  # type: ignore[arg-type]
    return RealbasisError(Problem(code, message, expected, found, fix, loc, "error", remedy))


def warn(
    code: str,
    message: str,
    *,
    expected: str = "",
    found: str = "",
    fix: str = "",
    remedy: str = "",
    where: Location | None = None,
    **where_kw: object,
) -> Problem:
    """Build a warning problem that travels with a result."""
    loc = where if where is not None else Location(**where_kw)  # type: ignore[arg-type]
    return Problem(code, message, expected, found, fix, loc, "warning", remedy)


# Codes shared by several areas live here.
CL001 = register("CL001", "command-line argument invalid")
