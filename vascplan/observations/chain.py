"""The hash chain of the observation record: each entry carries the hash of the one before.

Every stored entry holds ``prev_hash``, the SHA-256 of the entry before it in insertion
order (entry id order; the first entry's is :data:`GENESIS`), and ``entry_hash``, the
SHA-256 of its own canonical serialisation, which includes ``prev_hash``. Changing any
stored field of any entry, or removing an entry from the middle, breaks the chain at that
entry; :func:`check_chain` names the first place it breaks.

The serialisation is frozen (``vascplan-chain/1``): a JSON object of the fields in
:data:`CHAIN_FIELDS`, keys sorted, no spaces, UTF-8, integers as numbers, absent values as
``null``. Changing it would need a new chain version and a migration.

A chain without a secret or an outside anchor cannot stop someone who rewrites every hash
after the entry they alter: ``vascplan obs verify`` prints the chain head so that it can be
noted elsewhere and compared later (``--head``).

References
----------
.. [1] Haber S, Stornetta WS. How to time-stamp a digital document. J Cryptology.
   1991;3(2):99-111. doi:10.1007/BF00196791
.. [2] NIST FIPS 180-4, Secure Hash Standard (SHA-256), 2015.
   doi:10.6028/NIST.FIPS.180-4
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

CHAIN_VERSION = "vascplan-chain/1"
GENESIS = "0" * 64
"""The ``prev_hash`` of a store's first entry."""

CHAIN_FIELDS = (
    "id",
    "batch_id",
    "unit",
    "unit_id",
    "bed",
    "ref",
    "time_utc",
    "time_local",
    "recorded_by",
    "item",
    "site",
    "value",
    "corrects",
    "reason",
    "entered_at",
    "prev_hash",
)
"""The stored fields an entry's hash covers (every column but ``entry_hash`` itself)."""


def canonical(row: Mapping[str, Any]) -> bytes:
    """The frozen serialisation of one entry (see the module notes).

    >>> canonical({f: None for f in CHAIN_FIELDS} | {"id": 1, "bed": 2})[:28]
    b'{"batch_id":null,"bed":2,"co'
    """
    doc = {name: row[name] for name in CHAIN_FIELDS}
    return json.dumps(doc, sort_keys=True, separators=(",", ":"), ensure_ascii=False).encode(
        "utf-8"
    )


def entry_hash(row: Mapping[str, Any]) -> str:
    """SHA-256 (hex) of :func:`canonical` of ``row``, whose ``prev_hash`` is set."""
    return hashlib.sha256(canonical(row)).hexdigest()


def link(rows: list[dict[str, Any]], first_id: int, prev: str) -> str:
    """Give new rows their ids (from ``first_id``) and chain them after ``prev``, in place.

    Returns the hash of the last row (the new chain head).
    """
    for offset, row in enumerate(rows):
        row["id"] = first_id + offset
        row["prev_hash"] = prev
        prev = row["entry_hash"] = entry_hash(row)
    return prev


@dataclass(frozen=True)
class ChainReport:
    """What :func:`check_chain` found.

    Attributes
    ----------
    entries : int
        Entries read.
    head : str
        The last entry's stored hash (GENESIS for an empty record).
    broken_at : int or None
        The first entry found altered, or whose predecessor was altered or removed.
    problem : str
        One line saying what is wrong (empty when intact).
    seen_head : bool
        Whether the hash asked for (``expect``) is among the stored entry hashes.
    """

    entries: int
    head: str
    broken_at: int | None
    problem: str
    seen_head: bool


def check_chain(rows: Iterable[Mapping[str, Any]], expect: str | None = None) -> ChainReport:
    """Walk the entries in id order and report the first break in the chain.

    Parameters
    ----------
    rows : iterable of mapping
        Every stored entry, in id order, with the fields of :data:`CHAIN_FIELDS` and
        ``entry_hash``.
    expect : str, optional
        A chain head noted earlier: reported whether it is still one of the entries'
        hashes (an earlier head is always in an intact, grown chain).
    """
    prev_hash, prev_id, n = GENESIS, None, 0
    seen = expect is None
    for row in rows:
        n += 1
        rid = int(row["id"])
        stored = row["entry_hash"]
        if stored != entry_hash(row):
            what = f"entry {rid} altered (its content no longer matches its hash)"
            return ChainReport(n, stored or "", rid, what, seen)
        if row["prev_hash"] != prev_hash:
            if prev_id is None:
                what = f"entries before entry {rid} removed (it does not start the chain)"
                return ChainReport(n, stored or "", rid, what, seen)
            if rid != prev_id + 1:
                lost = f"{prev_id + 1}" if rid == prev_id + 2 else f"{prev_id + 1}-{rid - 1}"
                what = f"entry {lost} removed (entry {rid} no longer links to entry {prev_id})"
                return ChainReport(n, stored or "", prev_id + 1, what, seen)
            what = f"entry {prev_id} altered (entry {rid} no longer links to it)"
            return ChainReport(n, stored or "", prev_id, what, seen)
        if expect is not None and stored == expect:
            seen = True
        prev_hash, prev_id = stored, rid
    return ChainReport(n, prev_hash, None, "", seen)
