"""The Make forms, one per logged step; each hands its cleaned input to one service."""

from .base import MakeForm
from .fabrication import (
    DepositionRunForm,
    LinkerLayerForm,
    NanoparticleBatchForm,
    ParticleAttachmentForm,
    TemplateAssemblyForm,
)
from .materials import ReagentLotForm, SphereLotForm, StorageLocationForm
from .measurements import (
    DatasetForm,
    QcMeasurementForm,
    ReferenceMeasurementForm,
    UvVisRecordForm,
)

__all__ = [
    "DatasetForm", "DepositionRunForm", "LinkerLayerForm", "MakeForm", "NanoparticleBatchForm",
    "ParticleAttachmentForm", "QcMeasurementForm", "ReagentLotForm", "ReferenceMeasurementForm",
    "SphereLotForm", "StorageLocationForm", "TemplateAssemblyForm", "UvVisRecordForm",
]
