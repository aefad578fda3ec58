"""The dashboard's data access (dashboard/data.py) and shared secret key
(dashboard/secret.py): workspaces cached by id and version, the demo built once and
never changed, uploads kept under checked ids."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest

from dashboard.data import DEMO_NAME, DataAccess, WorkspaceRef
from dashboard.screens.real import view as real_view
from pipeline.errors import RealbasisError
from pipeline.settings import Settings


def test_demo_workspace_is_built_once(tmp_path: Path):
    a = DataAccess(Settings(data_dir=str(tmp_path)))
    b = DataAccess(Settings(data_dir=str(tmp_path)))
    ra, rb_ = a.demo_ref(), b.demo_ref()
    assert ra.id == rb_.id
    assert sum(1 for w in a.store.list() if w.name == DEMO_NAME) == 1
    ws = a.load(ra)
    assert "ILLUSTRATIVE" in ws.notes and "Harbourline" in ws.notes


def test_cache_is_keyed_by_id_and_version(access: DataAccess):
    ws = access.create("cache")
    ref = WorkspaceRef(ws.id, ws.version)
    assert access.load(ref) is access.load(ref)
    saved = access.save(dataclasses.replace(ws, notes="changed"), action="note")
    assert access.load(WorkspaceRef(ws.id, 0)).notes == "changed"
    assert access.load(ref).notes == ""  # the old version is still the old version
    assert saved.version == ws.version + 1


def test_kept_uploads_are_shared_files_with_checked_ids(access: DataAccess):
    uid = access.keep_upload(b"abc", "a.csv")
    assert access.upload(uid) == (b"abc", "a.csv")
    for bad in ("../../etc/passwd", "0" * 64, 5):
        with pytest.raises(RealbasisError) as err:
            access.upload(bad)  # type: ignore[arg-type]
        assert err.value.code == "UI003"


def test_secret_key_is_generated_once_and_shared(tmp_path: Path):
    from dashboard.secret import secret_key

    s = Settings(data_dir=str(tmp_path))
    assert secret_key(s) == secret_key(s) and len(secret_key(s)) > 40
    assert secret_key(s.replace(secret_key="fixed")) == "fixed"


def test_changes_to_the_shared_demo_go_to_a_copy(access: DataAccess):
    ref = access.demo_ref()
    demo = access.load(ref)
    saved = access.save(real_view.save_choices(demo, "Footwear revenue", "Chained consumer index",
                                          "2023", "auto", False), action="choices")
    assert saved.id != ref.id and saved.name.startswith("My copy of the demo")
    assert saved.settings["series"] == "Footwear revenue" and saved.series.keys() == demo.series.keys()
    assert access.load(WorkspaceRef(ref.id, 0)).version == ref.version
