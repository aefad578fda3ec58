"""Fixes fit the face that shows them: the engine's problems say what to do in neutral
words plus a remedy key; the command line names its options, the dashboard its controls,
and neither names the other's (project rule: a message on a screen never names a
command-line option; a message on the command line never names a screen)."""

from __future__ import annotations

import ast
import re
from pathlib import Path

import pytest

from dashboard.remedies import SCREEN
from dashboard.screens._shared.view import problem_dict
from pipeline.commands._remedies import CLI
from pipeline.errors import REMEDIES, Problem, RealbasisError, fail
from pipeline.labels import parse_label_column

ROOT = Path(__file__).resolve().parent.parent
OPTION = re.compile(r"(?<![\w-])--[a-z][a-z-]+")
PY_ARG = re.compile(r"\b[a-z_]+=(?:True|False|\d)")
SCREENS = ("Data intake", "Deflator shelf", "Real terms", "Deflator spread", "Revisions",
           "Share and export", " screen")


def test_every_remedy_has_words_on_both_faces():
    assert set(CLI) == set(REMEDIES)
    assert set(SCREEN) == set(REMEDIES)


@pytest.mark.parametrize("key", sorted(REMEDIES))
def test_screen_words_name_no_option_and_cli_words_no_screen(key):
    assert not OPTION.search(SCREEN[key]), SCREEN[key]
    assert not PY_ARG.search(SCREEN[key]), SCREEN[key]
    assert not any(s in CLI[key] for s in SCREENS), CLI[key]


def test_unknown_remedy_is_refused():
    with pytest.raises(ValueError, match="unknown remedy"):
        Problem("PE102", "x", remedy="no-such-remedy")


def _engine_texts() -> list[tuple[str, int, str]]:
    """Every literal text passed as message/expected/found/fix to fail, warn or Problem in
    the engine (pipeline/, not its command line)."""
    out = []
    for path in sorted((ROOT / "pipeline").rglob("*.py")):
        if "commands" in path.parts:
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if not isinstance(node, ast.Call):
                continue
            name = getattr(node.func, "id", getattr(node.func, "attr", ""))
            if name not in ("fail", "warn", "Problem"):
                continue
            args = [*node.args[1:5], *(k.value for k in node.keywords
                                       if k.arg in ("expected", "found", "fix"))]
            for arg in args:
                for sub in ast.walk(arg):
                    if isinstance(sub, ast.Constant) and isinstance(sub.value, str):
                        out.append((path.name, sub.lineno, sub.value))
    return out


def test_engine_messages_name_no_option_and_no_screen():
    texts = _engine_texts()
    assert len(texts) > 200  # the walk really sees the engine's messages
    bad = [(f, n, t) for f, n, t in texts
           if OPTION.search(t) or any(s in t for s in SCREENS[:-1])]
    assert not bad, bad


def _pe102() -> RealbasisError:
    with pytest.raises(RealbasisError) as info:
        parse_label_column(["FY2024", "FY2025"], None, file="budget.csv", column="period")
    return info.value


def test_fiscal_start_fix_on_each_face():
    err = _pe102()
    assert err.code == "PE102"
    cli = err.render(CLI)
    assert "--fiscal-start" in cli and "Data intake" not in cli
    shown = problem_dict(err.problems[0])
    assert "Data intake" in shown["fix"] and not OPTION.search(str(shown))
    # exports and the Python API keep the neutral text
    assert not OPTION.search(err.render()) and "Data intake" not in err.render()


def test_cli_prints_its_own_words(tmp_path):
    from pipeline.cli import main

    f = tmp_path / "budget.csv"
    f.write_text("period,Program A\nFY2024,1\nFY2025,2\n", encoding="utf-8")
    import contextlib
    import io

    buf = io.StringIO()
    with contextlib.redirect_stderr(buf):
        assert main(["check", str(f)]) == 2
    assert "--fiscal-start" in buf.getvalue()


def test_remedy_survives_as_warning_and_dict():
    p = fail("PE102", "m", fix="f", remedy="fiscal_start").problems[0]
    assert p.as_warning().remedy == "fiscal_start"
    assert p.as_dict()["remedy"] == "fiscal_start"


def _dashboard_texts() -> list[tuple[str, int, str]]:
    """Every literal text the dashboard itself puts in a problem (fail/warn/Problem in
    dashboard/) and every notice it builds from literals (notice(...), the screens' own
    words on the page)."""
    out = []
    for path in sorted((ROOT / "dashboard").rglob("*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if not isinstance(node, ast.Call):
                continue
            name = getattr(node.func, "id", getattr(node.func, "attr", ""))
            if name not in ("fail", "warn", "Problem", "notice"):
                continue
            args = [*node.args[:5], *(k.value for k in node.keywords
                                     if k.arg in ("expected", "found", "fix"))]
            for arg in args:
                for sub in ast.walk(arg):
                    if isinstance(sub, ast.Constant) and isinstance(sub.value, str):
                        out.append((str(path.relative_to(ROOT)), sub.lineno, sub.value))
    return out


def test_dashboard_messages_name_no_command_line_option_or_python_argument():
    texts = _dashboard_texts()
    assert len(texts) > 40  # the walk really sees the dashboard's own messages
    bad = [(f, n, t) for f, n, t in texts
           if OPTION.search(t) or PY_ARG.search(t) or "fy_start" in t or "bare=" in t]
    assert not bad, bad
