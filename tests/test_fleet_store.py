"""The SQLite fleet store: round trip, atomic batches, hash cache, schema version."""

from __future__ import annotations

import hashlib
import sqlite3

import pytest

from clashcheck.errors import InputError, OutputError
from clashcheck.fleet.records import AnalysisRecord, ModeRecord
from clashcheck.fleet.store import Store, file_sha256


def _record(key: str, ok: bool = True) -> AnalysisRecord:
    modes = (ModeRecord("mode 1", 172.5, 0.025, 0.02, 0.03, "roll", 0.9, viscous_damping=0.02,
                        friction_drop_per_cycle=0.001),
             ModeRecord("mode 2", 265.0, None, 0.0, 0.01, "any", 0.5))
    return AnalysisRecord(content_sha256=key, settings_key="s", path="/x.wav", kind="tap", ok=ok,
                          error=None if ok else "x.wav: bad header", modes=modes if ok else (),
                          method="tap", sample_rate_hz=8000.0, duration_s=3.0, resolution_hz=1.0,
                          warnings=("one",), elapsed_s=0.1)


def test_round_trip(tmp_path):
    with Store(tmp_path / "s.sqlite") as st:
        assert st.put([_record("a"), _record("b", ok=False)]) == 2
        assert st.known() == {("a", "s"), ("b", "s")}
        assert st.get("a", "s") == _record("a")
        assert st.get("b", "s") == _record("b", ok=False)
        assert st.get("c", "s") is None


def test_a_failed_batch_writes_nothing(tmp_path):
    with Store(tmp_path / "s.sqlite") as st:
        bad = _record("b")
        object.__setattr__(bad, "modes", (None,))  # breaks inside the transaction
        with pytest.raises(AttributeError):
            st.put([_record("a"), bad])
        assert st.known() == set()


def test_content_hash_is_sha256_and_cached(tmp_path):
    f = tmp_path / "r.wav"
    f.write_bytes(b"abc" * 1000)
    with Store(tmp_path / "s.sqlite") as st:
        assert st.content_hash(str(f)) == hashlib.sha256(b"abc" * 1000).hexdigest()  # hashlib, not ours
        assert file_sha256(f, chunk=7) == hashlib.sha256(b"abc" * 1000).hexdigest()
        f.write_bytes(b"abd" * 1000)  # same size; the mtime changes
        import os

        os.utime(f, ns=(1, 1))
        assert st.content_hash(str(f)) == hashlib.sha256(b"abd" * 1000).hexdigest()


def test_a_store_of_another_schema_version_is_refused(tmp_path):
    Store(tmp_path / "s.sqlite").close()
    db = sqlite3.connect(tmp_path / "s.sqlite")
    with db:
        db.execute("UPDATE meta SET value = '99' WHERE key = 'schema_version'")
    db.close()
    with pytest.raises(InputError, match="schema version"):
        Store(tmp_path / "s.sqlite")


def test_not_a_database(tmp_path):
    """Another file at the store path is not replaced (the output policy: it needs --force)."""
    (tmp_path / "s.sqlite").write_bytes(b"this is not sqlite" * 100)
    with pytest.raises(OutputError, match="not written by clashcheck"):
        Store(tmp_path / "s.sqlite")
