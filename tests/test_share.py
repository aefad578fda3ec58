"""Reviewer links: strong tokens, stored hashed, expiring, revocable; read-only for real.

Token strength follows the OWASP Session Management Cheat Sheet ("session identifiers
must have at least 64 bits of entropy"; we require the issue's 128 and issue 256) and the
Python documentation of ``secrets.token_urlsafe`` ("32 bytes ... sufficient for typical
use"); storing only a SHA-256 of a high-entropy token is common practice (the token is
random, so no salt or slow hash is needed).
"""

from __future__ import annotations

import base64
import datetime as dt
import hashlib
import math

import pytest
import sqlalchemy as sa

from pipeline.errors import RealbasisError
from pipeline.store import WorkspaceStore, hash_token, links_table


@pytest.fixture
def store(tmp_path):
    s = WorkspaceStore(f"sqlite:///{tmp_path / 'share.sqlite'}")
    yield s
    s.close()


def test_tokens_carry_at_least_128_random_bits_and_differ(store):
    ws = store.create("links")
    tokens = [store.create_link(ws.id)[0] for _ in range(50)]
    assert len(set(tokens)) == len(tokens)
    for t in tokens:
        raw = base64.urlsafe_b64decode(t + "=" * (-len(t) % 4))
        assert len(raw) * 8 >= 128
        assert len(raw) == 32  # secrets.token_urlsafe(32)
    # A crude check that the bytes are not patterned: across 50 tokens every byte value
    # position varies (a constant or counter-like token would fail).
    columns = list(zip(*(base64.urlsafe_b64decode(t + "=") for t in tokens), strict=True))
    assert all(len(set(col)) > 10 for col in columns)
    # Shannon entropy of the pooled bytes is close to 8 bits per byte.
    pooled = b"".join(base64.urlsafe_b64decode(t + "=") for t in tokens)
    counts = [pooled.count(bytes([b])) for b in range(256)]
    entropy = -sum(c / len(pooled) * math.log2(c / len(pooled)) for c in counts if c)
    assert entropy > 7.5


def test_only_the_hash_is_stored(store):
    ws = store.create("hashes")
    token, info = store.create_link(ws.id, label="auditor")
    with store.engine.connect() as conn:
        rows = conn.execute(sa.select(links_table)).mappings().all()
        dump = "\n".join(str(dict(r)) for r in rows)
    assert token not in dump
    assert rows[0]["token_sha256"] == hashlib.sha256(token.encode()).hexdigest() == hash_token(token)
    # nor in the audit trail
    assert all(token not in str(e.detail) for e in store.audit(ws.id))
    assert store.resolve_token(token).id == info.id


def test_expiry_and_revocation(store):
    ws = store.create("expiry")
    now = dt.datetime.now(dt.UTC)
    token, info = store.create_link(ws.id, expires_at=now + dt.timedelta(hours=1))
    assert store.resolve_token(token) is not None
    assert info.state(now + dt.timedelta(hours=2)) == "expired"
    # make it expire by moving its expiry into the past in the database
    with store.engine.begin() as conn:
        conn.execute(links_table.update().values(expires_at=now - dt.timedelta(seconds=1)))
    assert store.resolve_token(token) is None
    assert store.list_links(ws.id)[0].state() == "expired"

    token2, info2 = store.create_link(ws.id, label="council staff")
    assert store.resolve_token(token2).workspace_id == ws.id
    revoked = store.revoke_link(info2.id)
    assert revoked.state() == "revoked"
    assert store.resolve_token(token2) is None
    assert store.revoke_link(info2.id).revoked_at == revoked.revoked_at  # idempotent
    events = [e.event for e in store.audit(ws.id)]
    assert events.count("link-create") == 2 and events.count("link-revoke") == 1

    with pytest.raises(RealbasisError) as err:
        store.create_link(ws.id, expires_at=now - dt.timedelta(days=1))
    assert err.value.code == "SH005"
    with pytest.raises(RealbasisError) as err:
        store.revoke_link("nope")
    assert err.value.code == "SH004"
    with pytest.raises(RealbasisError) as err:
        store.create_link("no-such-workspace")
    assert err.value.code == "ST001"


def test_garbage_tokens_resolve_to_nothing(store):
    ws = store.create("garbage")
    token, _ = store.create_link(ws.id)
    for bad in ("", "x", token[:-1], token + "A", token.upper(), "' OR 1=1 --", "a" * 5000):
        assert store.resolve_token(bad) is None
