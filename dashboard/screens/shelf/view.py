"""The Deflator shelf's view model: plain functions, tested without a browser
(tests/test_view_shelf.py).

Rows of the shelf table and the drawn indexes; the four actions (rebase, project, link
two segments, build an own cost index) each call the engine (pipeline.indexes,
pipeline.projection, pipeline.costindex) and add a NEW index to the workspace, leaving the
original as it was; :func:`run_action` runs one and saves the workspace.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Sequence
from typing import Any

from dash import no_update

from pipeline.errors import RealbasisError, fail
from pipeline.model import Series, Workspace

from ...components import Column, method_view, notice, problems_view, table
from ...data import DataAccess, WorkspaceRef, saved_words
from ...figures import empty_figure, index_figure
from .._shared.view import (
    UI005,
    error_dicts,
    fiscal_note,
    fy_start,
    latest_vintage,
    period_placeholder,
    pick_index,
    read_base,
    span_text,
    stretch_text,
)


def shelf_rows(ws: Workspace) -> list[dict[str, Any]]:
    """One row per index and vintage: what it is, where it is 100, what is not final."""
    rows = []
    for name, vins in ws.indexes.items():
        for vin, s in sorted(vins.items(), reverse=True):
            rows.append({
                "name": name, "vintage": vin or "not stated",
                "frequency": s.frequency.describe(),
                "reference": s.reference or (s.unit or "not stated"),
                "span": span_text(s), "status": stretch_text(s),
                "latest": "yes" if vin == latest_vintage(vins) else "",
            })
    return rows


def index_label(ws: Workspace, name: str) -> str:
    """The index's name, with the vintage used when several vintages are held."""
    vins = ws.indexes.get(name) or {}
    if len(vins) > 1:
        return f"{name} (latest vintage, {latest_vintage(vins) or 'not stated'})"
    return name


def index_options(ws: Workspace) -> list[dict[str, str]]:
    """Index pickers act on an index's latest vintage; the label says so where it matters."""
    return [{"label": index_label(ws, name), "value": name} for name in ws.indexes]


def figure_items(ws: Workspace, names: Sequence[str]) -> list[dict[str, Any]]:
    items = []
    for name in names:
        if name not in ws.indexes:
            continue
        s = pick_index(ws, name)
        v = s.values
        items.append({"name": index_label(ws, name),
                      "x": [p.start_time.strftime("%Y-%m-%d") for p in v.index],
                      "labels": s.frequency.labels(v.index), "y": v.to_numpy(),
                      "status": s.status_or_final().astype(str).tolist()})
    return items


NAME_TAKEN = "An index named"
VINTAGE_MARK = " · vintage "
"""Joins an index's name and an older vintage in the link pickers' values."""


def link_options(ws: Workspace) -> list[dict[str, str]]:
    """The link pickers' options: each index at its latest vintage (its name), then each
    older vintage it holds, so an older vintage can be linked too (to a newer one of the
    same index, or to another index)."""
    opts: list[dict[str, str]] = []
    for name, vins in ws.indexes.items():
        opts.append({"label": index_label(ws, name), "value": name})
        latest = latest_vintage(vins)
        for vin in sorted(vins, reverse=True):
            if vin != latest:
                opts.append({"label": f"{name}, older vintage {vin or 'not stated'}",
                             "value": f"{name}{VINTAGE_MARK}{vin}"})
    return opts


def pick_segment(ws: Workspace, value: Any) -> tuple[Series, str]:
    """The index and vintage a link picker's value names, and how to call it: the name
    alone for the latest vintage, 'name (vintage v)' for an older one."""
    text = str(value or "")
    if text in ws.indexes:
        return pick_index(ws, text), text
    for name, vins in ws.indexes.items():
        for vin in vins:
            if text == f"{name}{VINTAGE_MARK}{vin}":
                return vins[vin], f"{name} (vintage {vin or 'not stated'})"
    return pick_index(ws, text), text  # UI005: no such index


def free_name(ws: Workspace, name: str) -> str:
    """``name``, or 'name (2)', 'name (3)', … when an index of that name is on the shelf
    already: a new result never takes the place of an existing index."""
    if name not in ws.indexes:
        return name
    n = 2
    while f"{name} ({n})" in ws.indexes:
        n += 1
    return f"{name} ({n})"


def _put_index(ws: Workspace, s: Series) -> Workspace:
    indexes = {k: dict(v) for k, v in ws.indexes.items()}
    indexes.setdefault(s.name, {})[s.vintage or ""] = s
    return dataclasses.replace(ws, indexes=indexes)


def _add_new(ws: Workspace, s: Series, wanted: str) -> tuple[Workspace, Series, list[str]]:
    """Put ``s`` on the shelf as ``wanted``, or under a free name when that is taken; the
    note says so (the index already there stays as it was)."""
    name = free_name(ws, wanted)
    out = dataclasses.replace(s, name=name)
    note = ([] if name == wanted else
            [f"{NAME_TAKEN} {wanted!r} is on the shelf already and stays as it was; this "
             f"result is named {name!r}."])
    return _put_index(ws, out), out, note


def rebase_index(ws: Workspace, name: str, base: str) -> tuple[Workspace, list[str]]:
    """Add the index rebased to ``base`` = 100 (pipeline.indexes.rebase); the period is
    read with the workspace's fiscal year (FY2025, 2024-25, ranges)."""
    from pipeline.indexes import rebase

    if not (base or "").strip():
        raise fail(UI005, "no base period given", expected=period_placeholder(ws)[5:],
                   found="nothing", fix="Type the new base period.")
    s = pick_index(ws, name)
    span = read_base(ws, base.strip(), s.frequency, use="rebase")
    ws2, out, note = _add_new(ws, rebase(s, span, fy_start=fy_start(ws)),
                              f"{name} ({span.label}=100)")
    return ws2, [
        f"Added {out.name!r}: {name} rebased so that its average over {span.describe()} is "
        "100 (percent changes do not move).", *note, *fiscal_note(ws)]


def link_indexes(ws: Workspace, old: str, new: str, overlap: str | None
                 ) -> tuple[Workspace, list[str]]:
    """Add the two segments linked at the overlap (pipeline.indexes.link); the overlap is
    read with the workspace's fiscal year. Either segment may be an older vintage
    (:func:`link_options`); a result whose name is taken gets a free one
    (:func:`free_name`), never the existing index's place."""
    from pipeline.indexes import link

    if old == new:
        raise fail(UI005, "the same index is chosen twice", expected="two different indexes",
                   found=str(old), fix="Choose the older and the newer segment.")
    (o, old_name), (n, new_name) = pick_segment(ws, old), pick_segment(ws, new)
    text = (overlap or "").strip()
    span = read_base(ws, text, n.frequency, use="overlap") if text else None
    linked = link(o, n, span, fy_start=fy_start(ws))
    ws2, out, note = _add_new(ws, linked.series, f"{old_name} linked with {new_name}")
    return ws2, [
        f"Added {out.name!r}: linked at {linked.overlap}, factor {linked.factor:,.6f}.",
        *note, linked.method, *(p.message for p in linked.warnings), *fiscal_note(ws)]


def project_index(ws: Workspace, name: str, rate: Any, until: str | None
                  ) -> tuple[Workspace, list[str]]:
    """Add the index extended to ``until`` at an assumed rate in percent a year
    (pipeline.projection.project with ``bare="percent"``: '2.5' and '2.5%' are 2.5 % a
    year; an out-of-range rate is answered with what was typed). ``until`` is read with
    the workspace's fiscal year (FY2030, 2029-30)."""
    from pipeline.projection import parse_rate, project

    text = "" if rate is None else str(rate).strip()
    if not text or not (until or "").strip():
        raise fail(UI005, "projection needs an annual rate and an end period",
                   expected="a rate in percent a year and a period such as "
                            + ("FY2030" if fy_start(ws) else "2030"),
                   found=f"rate {text or '(empty)'}, until {(until or '').strip() or '(empty)'}",
                   fix="Fill in both fields.")
    end = read_base(ws, until.strip(), use="until")
    p = project(pick_index(ws, name), text, until=end, fy_start=fy_start(ws), bare="percent")
    pct = 100 * parse_rate(text, bare="percent")
    ws2, out, note = _add_new(ws, p.series, f"{name} projected at {pct:g} % a year")
    return ws2, [
        f"Added {out.name!r}: {p.first} to {p.last} projected (assumed, not measured), "
        f"at {pct:g} % a year.", *note, *p.method_note(), *(w.message for w in p.warnings),
        *fiscal_note(ws)]


COST_METHODS = {"fixed": "fixed weights", "annual-chain": "annual chain",
                "tornqvist": "chained Törnqvist"}


def build_cost_index(ws: Workspace, name: str | None, components: Sequence[str],
                     weights_csv: str | None, method: str, settings: Any = None
                     ) -> tuple[Workspace, list[str]]:
    """Blend component indexes with yearly weights into an own cost index
    (pipeline.costindex.blend); the typed weights are read by
    :func:`pipeline.costindex.weights_from_text` (problems by line of the box)."""
    from pipeline.costindex import blend, weights_from_text

    if len(components) < 2:
        raise fail(UI005, "a cost index needs two or more components",
                   expected="two or more component indexes", found=f"{len(components)} chosen",
                   fix="Choose the component indexes.")
    # typed or pasted weights: problems are located by line of the box, not by a file
    weights = weights_from_text(weights_csv or "", components=list(components),
                                fy_start=fy_start(ws), settings=settings)
    title = (name or "").strip() or "Own cost index"
    ci = blend([pick_index(ws, c) for c in components], weights,
               methods=[method] if method in COST_METHODS else None, name=title)
    out = ci.series(method if method in COST_METHODS else None, name=title)
    out = dataclasses.replace(out, vintage=max((pick_index(ws, c).vintage or "")
                                               for c in components) or None)
    ws2, out, note = _add_new(ws, out, title)
    return ws2, [f"Added {out.name!r} ({COST_METHODS.get(method, method)}).", *note,
                 *ci.method_note(), *(w.message for w in ci.warnings)]


SHELF_COLUMNS = (
    Column("name", "Index"),
    Column("vintage", "Vintage (as of)"),
    Column("latest", "Used by default"),
    Column("frequency", "Frequency"),
    Column("reference", "Reference"),
    Column("span", "Periods"),
    Column("status", "Preliminary / projected"),
)


def outputs(ws: Workspace, drawn: list[str] | None) -> tuple[Any, Any, list[Any], list[Any]]:
    """Shelf table, figure, and the options for every index picker."""
    rows = shelf_rows(ws)
    opts = index_options(ws)
    names = [o["value"] for o in opts]
    chosen = [n for n in (drawn or []) if n in names] or names[:3]
    fig = (index_figure(figure_items(ws, chosen), title="")
           if chosen else empty_figure("No price index in this workspace yet."))
    return (table(SHELF_COLUMNS, rows, caption="Price indexes in this workspace",
                  empty="No price index yet: upload one on the intake screen."),
            fig, opts, chosen)


def act(data: DataAccess, ref: WorkspaceRef, action: Callable[[Workspace], tuple[Workspace, list[str]]],
        what: str) -> tuple[WorkspaceRef | None, Any, Any]:
    """Run one shelf action and save; returns (new ref, message, method note)."""
    try:
        ws = data.load(ref)
        new_ws, lines = action(ws)
        saved = data.save(new_ws, action=what)
    except RealbasisError as err:
        return None, problems_view(error_dicts(err), title="Not done"), None
    return (WorkspaceRef(saved.id, saved.version),
            notice(" ".join([lines[0], *(line for line in lines[1:]
                                         if line.startswith(NAME_TAKEN)),
                             saved_words(ws, saved)]), "ok"),
            method_view(lines, title="What was done"))


ACTIONS = {"rebase": "rebased an index", "project": "projected an index",
           "link": "linked two index segments", "cost": "built an own cost index"}
"""The shelf's actions and the words the audit trail records for each."""


def run_action(data: DataAccess, ref: WorkspaceRef, which: str, *, target: Any = None,
               base: Any = None, rate: Any = None, until: Any = None, old: Any = None,
               new: Any = None, overlap: Any = None, cost_name: Any = None,
               components: Any = None, weights: Any = None, method: Any = None
               ) -> tuple[WorkspaceRef | None, Any, Any]:
    """Run shelf action ``which`` (a key of :data:`ACTIONS`) with the screen's inputs and
    save; returns (new ref or None, message, method note or no_update). Rebasing and
    projecting need the index to work on."""
    actions: dict[str, Callable[[Workspace], tuple[Workspace, list[str]]]] = {
        "rebase": lambda ws: rebase_index(ws, target, base),
        "project": lambda ws: project_index(ws, target, rate, until),
        "link": lambda ws: link_indexes(ws, old, new, overlap),
        "cost": lambda ws: build_cost_index(ws, cost_name, components or [], weights, method,
                                            data.settings),
    }
    if which in ("rebase", "project") and not target:
        return None, notice("Choose the index to work on first.", "warn"), no_update
    return act(data, ref, actions[which], ACTIONS[which])
