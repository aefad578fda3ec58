"""Callback requests as the Dash renderer sends them, built from ``/_dash-dependencies``.

Plumbing shared by the HTTP tests (Flask's test client, or ``requests`` against a real
gunicorn): find a callback by an output or an input it has, and make the body of a
``POST /_dash-update-component`` for it from a dict of ``"id.property": value``.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from typing import Any

_MULTI = re.compile(r"^\.\.(.*)\.\.$")
GATE = "rb-ref-"
"""Id prefix of the screens' workspace gates (dashboard.ids.screen_ref): a value given for
``rb-workspace.data`` (WORKSPACE) fills them too, as the shell does for the shown screen."""
WORKSPACE = "rb-workspace.data"


def value_for(values: Mapping[str, Any], item: Mapping[str, Any]) -> Any:
    """The value of one input or state (``{"id", "property"}``) in ``values``; a screen's
    gate takes the workspace's value when it has none of its own (a shown screen's gate
    holds what the workspace store holds, dashboard/app.py)."""
    value = values.get(f"{item['id']}.{item['property']}")
    if value is None and str(item["id"]).startswith(GATE) and item["property"] == "data":
        value = values.get(WORKSPACE)
    return value


def outputs(dep: Mapping[str, Any]) -> list[str]:
    """The ``id.property`` outputs of a dependency (``@hash`` of duplicates kept)."""
    out = str(dep["output"])
    m = _MULTI.match(out)
    return m.group(1).split("...") if m else [out]


def _split(item: str) -> dict[str, str]:
    ident, _, prop = item.rpartition(".")
    return {"id": ident, "property": prop}


def plain(output: str) -> str:
    """``id.property`` without the ``@hash`` Dash adds to duplicate outputs."""
    return output.split("@", 1)[0]


def find(deps: Iterable[Mapping[str, Any]], *, output: str | None = None,
         trigger: str | None = None) -> Mapping[str, Any]:
    """The one callback with this output (``id.property``, duplicates included) and/or
    this input."""
    found = []
    for d in deps:
        if output is not None and output not in {plain(o) for o in outputs(d)}:
            continue
        if trigger is not None and trigger not in {f"{i['id']}.{i['property']}"
                                                   for i in d["inputs"]}:
            continue
        found.append(d)
    if len(found) != 1:
        raise LookupError(f"{len(found)} callbacks with output={output!r} trigger={trigger!r}")
    return found[0]


def body(dep: Mapping[str, Any], values: Mapping[str, Any] | None = None,
         changed: list[str] | None = None) -> dict[str, Any]:
    """The request body for ``dep``: inputs and state from ``values`` (missing: None);
    ``changed`` defaults to the first input."""
    values = values or {}
    outs = [_split(o) for o in outputs(dep)]

    def item(i: Mapping[str, Any]) -> dict[str, Any]:
        return {"id": i["id"], "property": i["property"], "value": value_for(values, i)}

    first = dep["inputs"][0] if dep["inputs"] else None
    return {
        "output": dep["output"],
        "outputs": outs if len(outs) > 1 or _MULTI.match(str(dep["output"])) else outs[0],
        "inputs": [item(i) for i in dep["inputs"]],
        "state": [item(s) for s in dep.get("state", [])],
        "changedPropIds": changed if changed is not None else (
            [f"{first['id']}.{first['property']}"] if first else []),
    }
