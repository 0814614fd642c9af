"""Inventory records, split by topic; import them from here."""

from .audit import Signature
from .base import CodedRecord, LifecycleRecord, StampedRecord, Status
from .fabrication import (
    DepositionRun,
    LinkerLayer,
    NanoparticleBatch,
    ParticleAttachment,
    Substrate,
    TemplateAssembly,
)
from .fabrication_limits import DepositionTolerance
from .materials import (
    CodeCounter,
    ReagentKind,
    ReagentLot,
    RecordKind,
    ShelfLifeRule,
    SphereLot,
    StorageLocation,
)
from .records import Dataset, DatasetFile, Flag, LineageEdge, StatusChange

__all__ = [
    "CodeCounter",
    "CodedRecord",
    "Dataset",
    "DatasetFile",
    "DepositionRun",
    "DepositionTolerance",
    "Flag",
    "LifecycleRecord",
    "LineageEdge",
    "LinkerLayer",
    "NanoparticleBatch",
    "ParticleAttachment",
    "ReagentKind",
    "ReagentLot",
    "RecordKind",
    "ShelfLifeRule",
    "Signature",
    "SphereLot",
    "StampedRecord",
    "Status",
    "StatusChange",
    "StorageLocation",
    "Substrate",
    "TemplateAssembly",
]
