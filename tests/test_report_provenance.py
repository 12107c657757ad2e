"""Tests for clashcheck.report.provenance (the line on every figure and Markdown report)."""

from __future__ import annotations

import hashlib

import pytest

from clashcheck import __version__
from clashcheck.report.provenance import Provenance, content_hash, markdown_footer


def test_content_hash_is_sha256_of_length_prefixed_inputs():
    # derived: SHA-256 (FIPS 180-4) over each input as an 8-byte little-endian length and its bytes
    blobs = [b"name = 'a'\n", b"", b"\x00\xff"]
    h = hashlib.sha256()
    for b in blobs:
        h.update(len(b).to_bytes(8, "little") + b)
    assert content_hash(blobs) == h.hexdigest()[:8]
    assert content_hash(blobs, 64) == h.hexdigest()


def test_hash_changes_with_content_order_and_split():
    assert content_hash([b"a", b"b"]) != content_hash([b"b", b"a"])
    assert content_hash([b"ab"]) != content_hash([b"a", b"b"])
    assert content_hash([]) == hashlib.sha256(b"").hexdigest()[:8]


def test_line_and_footer():
    p = Provenance.of("Harbour  quad\n", [b"x"], date="2026-12-02")
    assert p.line() == f"clashcheck {__version__} · 2026-12-02 · Harbour quad · inputs sha256:{content_hash([b'x'])}"
    assert markdown_footer(p).endswith(f"<sub>{p.line()}</sub>\n")
    assert markdown_footer(p.line()) == markdown_footer(p)
    assert markdown_footer(None) == ""
    assert len(Provenance.of("x", []).date) == 10          # today, ISO


def test_bad_hash_length():
    with pytest.raises(ValueError, match="4 to 64"):
        content_hash([b"x"], 2)
