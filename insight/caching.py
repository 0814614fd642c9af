"""The insight figures cached under a digest of the data they are computed from.

The joined table is read every time (six queries, a fraction of the report's cost); its
SHA-256, with the day, the filters and whatever else the caller names, is the cache key.  A
record added, amended, voided or re-judged changes the table and so the key: a figure is
either recomputed or found under the digest of exactly the data on the page, never shown
stale.  ``CACHE_VERSION`` goes up when the computation itself changes, so a persistent
cache (production's file cache) never serves a figure of older code.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable
from typing import TypeVar

import pandas as pd
from django.core.cache import cache

from .selectors import InsightData

CACHE_VERSION = 1
CACHE_SECONDS = 24 * 3600  # the key changes with the data; a day bounds what is kept
T = TypeVar("T")


def data_digest(data: InsightData) -> str:
    """SHA-256 of the joined table, the QC results and the flags behind it, and the day."""
    digest = hashlib.sha256(f"{data.today.isoformat()}|".encode())
    for frame in (data.table, data.measurements, data.flags):
        digest.update("|".join(map(str, frame.columns)).encode())
        # Lists (failure reasons) cannot be hashed as objects; their text can.
        hashable = frame.astype({c: str for c in frame.columns if frame[c].dtype == object})
        digest.update(pd.util.hash_pandas_object(hashable, index=False).to_numpy().tobytes())
    return digest.hexdigest()


def cached(kind: str, digest: str, parts: tuple, compute: Callable[[], T]) -> T:
    """``compute()``'s result under ``kind``, the data's ``digest`` and the other key ``parts``
    (filters, target, limit): computed once per distinct input."""
    key = "insight:" + hashlib.sha256(
        repr((CACHE_VERSION, kind, digest, parts)).encode()).hexdigest()
    found = cache.get(key)
    if found is None:
        found = compute()
        cache.set(key, found, CACHE_SECONDS)
    return found
