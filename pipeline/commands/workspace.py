"""``realbasis workspace``: list, inspect, audit, export and share stored workspaces.

    realbasis workspace list
    realbasis workspace show ID [--version N]
    realbasis workspace history ID
    realbasis workspace audit ID
    realbasis workspace verify ID
    realbasis workspace link ID [--label TEXT] [--expires-days N] [--base-url URL]
    realbasis workspace links ID
    realbasis workspace revoke LINK_ID
    realbasis workspace export ID --out FILE [--base PERIOD] [--deflator NAME ...]

The store is the one the settings name (``--database-url`` / ``--data-dir`` or
REALBASIS_DATABASE_URL / REALBASIS_DATA_DIR), the same one the dashboard uses.
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import sys

from pipeline.errors import fail
from pipeline.settings import load_settings
from pipeline.store import SH005, WorkspaceStore


def _store(args: argparse.Namespace) -> WorkspaceStore:
    settings = load_settings({"data_dir": args.data_dir, "database_url": args.database_url})
    return WorkspaceStore.from_settings(settings)


def _fmt(t: dt.datetime | None) -> str:
    return t.isoformat(timespec="seconds") if t else "-"


def _list(args: argparse.Namespace) -> int:
    with _store(args) as store:
        rows = store.list()
    if args.json:
        print(json.dumps([{"id": r.id, "name": r.name, "version": r.version,
                           "updated_at": _fmt(r.updated_at)} for r in rows], indent=1))
        return 0
    for r in rows:
        print(f"{r.id}  v{r.version:<4} {_fmt(r.updated_at)}  {r.name}")
    return 0


def _show(args: argparse.Namespace) -> int:
    with _store(args) as store:
        ws = store.load(args.id, args.version)
    print(f"{ws.name}  (id {ws.id}, version {ws.version})")
    for name, s in ws.series.items():
        print(f"  series  {name}: {s.kind}, {s.frequency.describe()}, {len(s.values)} periods"
              f"{', ' + s.unit if s.unit else ''}")
    for name, vins in ws.indexes.items():
        for vin, s in vins.items():
            st = s.stretches()
            flags = [f"{k} {a}..{b}" for k, v in st.items() if v for a, b in [v]]
            print(f"  index   {name} [vintage {vin or 'unknown'}]: {s.frequency.describe()}, "
                  f"{len(s.values)} periods{'; ' + '; '.join(flags) if flags else ''}")
    if ws.settings:
        print("  settings: " + json.dumps(ws.settings, sort_keys=True))
    if ws.notes:
        print("  notes: " + ws.notes)
    return 0


def _history(args: argparse.Namespace) -> int:
    with _store(args) as store:
        for v in store.history(args.id):
            print(f"v{v.version:<4} {_fmt(v.saved_at)}  {v.actor}: {v.action}")
    return 0


def _audit(args: argparse.Namespace) -> int:
    with _store(args) as store:
        events = store.audit(args.id)
    for e in events:
        print(f"{_fmt(e.at)}  {e.actor}: {e.describe()}")
    return 0


def _verify(args: argparse.Namespace) -> int:
    with _store(args) as store:
        n = store.verify(args.id)
    print(f"{n} saved versions checked: every checksum matches")
    return 0


def _link(args: argparse.Namespace) -> int:
    expires = None
    if args.expires_days is not None:
        if args.expires_days <= 0:
            raise fail(SH005, "a reviewer link must expire after a positive number of days",
                       expected="--expires-days 1 or more", found=str(args.expires_days),
                       fix="Give a positive number of days or leave the option out.")
        expires = dt.datetime.now(dt.UTC) + dt.timedelta(days=args.expires_days)
    with _store(args) as store:
        token, info = store.create_link(args.id, expires_at=expires, label=args.label,
                                        actor=args.actor)
    base = args.base_url.rstrip("/")
    print(f"reviewer link {info.id} (expires {_fmt(info.expires_at) if expires else 'never'}):")
    print(f"{base}/review/{token}")
    sys.stderr.write("This is the only time the link is shown; only its hash is stored.\n")
    return 0


def _links(args: argparse.Namespace) -> int:
    with _store(args) as store:
        for li in store.list_links(args.id):
            print(f"{li.id}  {li.state():8} created {_fmt(li.created_at)}  expires "
                  f"{_fmt(li.expires_at)}  last used {_fmt(li.last_used_at)}  {li.label}")
    return 0


def _revoke(args: argparse.Namespace) -> int:
    with _store(args) as store:
        li = store.revoke_link(args.link_id, actor=args.actor)
    print(f"reviewer link {li.id} revoked at {_fmt(li.revoked_at)}")
    return 0


def _export(args: argparse.Namespace) -> int:
    from pipeline.workbook import export_workspace

    with _store(args) as store:
        ws = store.load(args.id, args.version)
        path = export_workspace(ws, args.out, base=args.base, deflators=args.deflator or None,
                                series=args.series or None, store=store, actor=args.actor,
                                command=" ".join(["realbasis", *sys.argv[1:]]))
    print(f"wrote {path}")
    return 0


def register(sub: argparse._SubParsersAction) -> None:
    p = sub.add_parser("workspace", help="list, inspect, audit, export and share stored workspaces")
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument("--database-url", help="SQLAlchemy URL of the store "
                        "(default REALBASIS_DATABASE_URL, else the SQLite file in the data folder)")
    common.add_argument("--data-dir", help="data folder (default REALBASIS_DATA_DIR)")
    common.add_argument("--actor", default="editor", help="name recorded in the audit trail")
    ws = p.add_subparsers(dest="workspace_command", metavar="ACTION", parser_class=type(p))
    ws.required = True

    q = ws.add_parser("list", parents=[common], help="every workspace with its version")
    q.add_argument("--json", action="store_true", help="print JSON")
    q.set_defaults(func=_list)
    for name, fn, helptext in (("show", _show, "what a workspace holds"),
                               ("history", _history, "every saved version"),
                               ("audit", _audit, "the audit trail"),
                               ("verify", _verify, "check every checksum of every version"),
                               ("links", _links, "reviewer links of a workspace")):
        q = ws.add_parser(name, parents=[common], help=helptext)
        q.add_argument("id", help="workspace id (see `realbasis workspace list`)")
        if name == "show":
            q.add_argument("--version", type=int, help="an earlier saved version")
        q.set_defaults(func=fn)
    q = ws.add_parser("link", parents=[common], help="create a read-only reviewer link")
    q.add_argument("id")
    q.add_argument("--label", default="", help="who the link is for")
    q.add_argument("--expires-days", type=float, help="days until the link stops working")
    q.add_argument("--base-url", default="http://127.0.0.1:8050",
                   help="address reviewers reach the dashboard at")
    q.set_defaults(func=_link)
    q = ws.add_parser("revoke", parents=[common], help="revoke a reviewer link")
    q.add_argument("link_id")
    q.set_defaults(func=_revoke)
    q = ws.add_parser("export", parents=[common],
                      help="write the audit workbook (.xlsx), CSV or JSON of a workspace")
    q.add_argument("id")
    q.add_argument("--out", required=True, help="file to write: .xlsx, .csv or .json")
    q.add_argument("--base", help="base period (default: the workspace's saved base)")
    q.add_argument("--deflator", action="append",
                   help="index to deflate by (repeat; default: the workspace's chosen ones)")
    q.add_argument("--series", action="append",
                   help="money series to export (repeat; default: the chosen series and the "
                        "others of its frequency)")
    q.add_argument("--version", type=int, help="an earlier saved version")
    q.set_defaults(func=_export)
