"""What a dry run or an import of one sheet found: rows to create, change or leave, and every
row error with its row, column and reason.  The page, the API and the command all show this
one report (as_dict for JSON)."""

from __future__ import annotations

from dataclasses import asdict, dataclass, field


@dataclass
class RowError:
    row: int
    column: str
    reason: str
    code: str


@dataclass
class RowOutcome:
    row: int
    action: str  # create | change | unchanged
    key: str
    code: str = ""
    changes: list[str] = field(default_factory=list)


@dataclass
class ImportReport:
    kind: str
    file_name: str
    sha256: str
    rows: int = 0
    created: list[RowOutcome] = field(default_factory=list)
    changed: list[RowOutcome] = field(default_factory=list)
    unchanged: list[RowOutcome] = field(default_factory=list)
    errors: list[RowError] = field(default_factory=list)
    columns: dict[str, str] = field(default_factory=dict)  # header -> field
    unmapped_headers: list[str] = field(default_factory=list)
    committed: bool = False

    @property
    def ok(self) -> bool:
        return not self.errors

    def as_dict(self) -> dict:
        data = asdict(self)
        data["ok"] = self.ok
        return data
