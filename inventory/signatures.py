"""Electronic signatures for release and reject (DESIGN §7, in the spirit of 21 CFR Part 11).

The contract shared by pages, API and services: a caller that releases or rejects a record
passes a ``SignatureIntent`` — the password the signer re-entered and the meaning chosen.
The service verifies the password, refuses self-release unless the lab allows it, and stores
an immutable signature (name, time, meaning, record code and content digest).
"""

from __future__ import annotations

from dataclasses import dataclass

REVIEWED = "reviewed"
APPROVED = "approved"
REJECTED = "rejected"
MEANINGS: tuple[str, ...] = (REVIEWED, APPROVED, REJECTED)


@dataclass(frozen=True)
class SignatureIntent:
    """What the signer typed: their password again, and what the signature means."""

    password: str
    meaning: str

    def __repr__(self) -> str:  # never echo a password into a log or traceback
        return f"SignatureIntent(meaning={self.meaning!r})"
