"""The engine stays pure: pipeline/ never imports dash, flask or plotly (DESIGN.md)."""

from __future__ import annotations

import subprocess
import sys
import textwrap

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
