"""The shape of the code (DESIGN.md "Shape of the code", DEVELOPERS.md module map).

The engine stays pure: pipeline/ never imports dash, flask or plotly. The dashboard's
modules form no import cycle, one module builds the app, and each screen is its own
package that uses shared modules but never another screen.
"""

from __future__ import annotations

import ast
import subprocess
import sys
import textwrap
from pathlib import Path

from conftest import ROOT


def test_pipeline_never_imports_the_web_stack():
    code = textwrap.dedent(
        """
        import importlib, pkgutil, sys
        import pipeline
        for info in pkgutil.walk_packages(pipeline.__path__, prefix="pipeline."):
            importlib.import_module(info.name)
        bad = sorted(m for m in sys.modules if m.split(".")[0] in ("dash", "flask", "plotly"))
        print(",".join(bad))
        """
    )
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True,
                         text=True, check=True)
    assert out.stdout.strip() == "", f"pipeline imported: {out.stdout.strip()}"


def test_problem_codes_are_unique_and_registered():
    from pipeline.commands.codes import load_all_codes

    codes = load_all_codes()
    assert codes, "no problem codes registered"
    # register() itself refuses a code reused with another title; here we check the
    # source: every code literal passed to register() appears once.
    import re

    seen: dict[str, str] = {}
    for path in (ROOT / "pipeline").rglob("*.py"):
        for m in re.finditer(r'register\(\s*"([A-Z]{2}\d{3})"', path.read_text()):
            assert m.group(1) not in seen or seen[m.group(1)] == str(path), (
                f"code {m.group(1)} registered in {seen.get(m.group(1))} and {path}"
            )
            seen[m.group(1)] = str(path)


# --------------------------------------------------------------------------- dashboard imports


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _resolve(name: str, modules: set[str]) -> str | None:
    """The dashboard module ``name`` refers to: itself, or the package holding the
    attribute it names (``dashboard.ids.X`` -> ``dashboard.ids``)."""
    while name:
        if name in modules:
            return name
        name = name.rpartition(".")[0]
    return None


def dashboard_imports() -> dict[str, set[str]]:
    """Every dashboard module and the dashboard modules it imports, from the source (ast):
    imports at the top and inside functions alike, relative ones resolved. Only explicit
    imports count (importing ``a.b`` also runs ``a/__init__.py``, but that is not an edge
    here, so a package may import its own submodules)."""
    paths = sorted((ROOT / "dashboard").rglob("*.py"))
    modules = {_module_name(p) for p in paths}
    graph: dict[str, set[str]] = {}
    for path in paths:
        me = _module_name(path)
        package = me if path.name == "__init__.py" else me.rpartition(".")[0]
        edges: set[str] = set()
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"), str(path))):
            targets: list[str] = []
            if isinstance(node, ast.Import):
                targets = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                if node.level:
                    base = package.rsplit(".", node.level - 1)[0] if node.level > 1 else package
                    base = f"{base}.{node.module}" if node.module else base
                else:
                    base = node.module or ""
                targets = [f"{base}.{a.name}" for a in node.names]
            for t in targets:
                found = _resolve(t, modules)
                if found is not None and found != me:
                    edges.add(found)
        graph[me] = edges
    return graph


def _cycle(graph: dict[str, set[str]]) -> list[str] | None:
    """One import cycle of ``graph`` as a path (first == last), or None."""
    state: dict[str, int] = {}  # 1 = on the current path, 2 = done
    stack: list[str] = []

    def visit(m: str) -> list[str] | None:
        state[m] = 1
        stack.append(m)
        for n in sorted(graph.get(m, ())):
            if state.get(n) == 1:
                return [*stack[stack.index(n):], n]
            if n not in state and (found := visit(n)):
                return found
        stack.pop()
        state[m] = 2
        return None

    for m in sorted(graph):
        if m not in state and (found := visit(m)):
            return found
    return None


def test_the_cycle_finder_finds_cycles():
    assert _cycle({"a": {"b"}, "b": {"c"}, "c": {"a"}}) == ["a", "b", "c", "a"]
    assert _cycle({"a": {"b", "c"}, "b": {"c"}, "c": set()}) is None


def test_the_import_reader_sees_relative_and_function_level_imports():
    graph = dashboard_imports()
    # a relative import at the top of a module
    assert "dashboard.ids" in graph["dashboard.app"]
    # the worker entry imports the app factory
    assert "dashboard.app" in graph["dashboard.celery_app"]
    # `from .. import ids` inside a screen package's callbacks
    assert "dashboard.ids" in graph["dashboard.screens.real.callbacks"]


def test_dashboard_modules_import_each_other_without_a_cycle():
    cycle = _cycle(dashboard_imports())
    assert cycle is None, "import cycle: " + " -> ".join(cycle or [])


def test_only_the_entry_points_import_the_app_factory():
    graph = dashboard_imports()
    importers = sorted(m for m, edges in graph.items() if "dashboard.app" in edges)
    assert importers == ["dashboard.celery_app", "dashboard.wsgi"]
    assert not [m for m, edges in graph.items() if "dashboard.celery_app" in edges]


def test_screen_packages_use_shared_modules_but_not_each_other():
    graph = dashboard_imports()

    def screen_of(module: str) -> str | None:
        parts = module.split(".")
        if len(parts) >= 3 and parts[:2] == ["dashboard", "screens"]:
            return parts[2]
        return None

    screens = {s for m in graph if (s := screen_of(m)) and not s.startswith("_")}
    assert screens >= {"intake", "shelf", "real", "spread", "revisions", "share"}
    for s in screens:
        assert f"dashboard.screens.{s}" in graph, f"{s} is a package"
        for part in ("layout", "callbacks", "view"):
            assert f"dashboard.screens.{s}.{part}" in graph, f"{s} lacks {part}.py"
    bad = sorted((m, n) for m, edges in graph.items() for n in edges
                 if (a := screen_of(m)) in screens and (b := screen_of(n)) in screens
                 and a != b)
    assert bad == [], f"screens import other screens: {bad}"
    # a screen's view model and page builder register no callbacks
    for s in screens:
        for part in ("view", "layout"):
            text = (ROOT / "dashboard" / "screens" / s / f"{part}.py").read_text()
            assert "@app.callback" not in text and ".callback(" not in text, (s, part)
