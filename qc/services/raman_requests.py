"""The parameters of a Raman import, one request object each, and their checks (services).

``QcImportRequest`` (a spectrum or map on a substrate, to be judged) and
``ReferenceImportRequest`` (the analyte alone, for the enhancement factor) share what every
acquisition names; :func:`check_acquisition` checks those shared parameters.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import date

from inventory.errors import refusal
from inventory.lifecycle import check_usable
from inventory.models import ReagentKind, ReagentLot, Substrate
from inventory.services.toolkit import RawUpload
from inventory.services.toolkit import require_kind as _require_kind
from inventory.services.toolkit import require_not_future as _require_not_future

from ..models.raman import ReferenceAnalyte, ReferenceMeasurement
from .enhancement import FILM_HEIGHT_REL_U_DEFAULT, SurfaceCoverage, surface_area_for


@dataclass(frozen=True, kw_only=True)
class Acquisition:
    """What every Raman import names: the analyte lot, the file and how it was measured.

    The file is ``upload`` (a ``RawUpload``: on disk for a big file, hashed once), or, from
    scripts and tests, ``filename`` and ``content`` bytes, which become its ``upload``.
    """

    analyte_lot: ReagentLot
    measured_on: date
    laser_nm: float
    power_mW: float
    integration_s: float
    accumulations: int = 1
    objective: str = ""
    analyte: ReferenceAnalyte | None = None
    notes: str = ""
    filename: str = ""
    content: bytes | None = None
    upload: RawUpload | None = None

    def __post_init__(self) -> None:
        if (self.upload is None) == (self.content is None):
            raise TypeError("give the file as upload, or as filename and content")
        if self.upload is None:  # the bytes move into the upload: one home for the file
            object.__setattr__(self, "upload", RawUpload.of_bytes(self.filename, self.content))
            object.__setattr__(self, "content", None)
        elif not self.filename:
            object.__setattr__(self, "filename", self.upload.name)


@dataclass(frozen=True, kw_only=True)
class ReferenceImportRequest(Acquisition):
    """A non-enhanced spectrum of the analyte at a known concentration (Le Ru et al. 2007)."""

    concentration_mol_L: float
    effective_height_um: float
    effective_area_um2: float
    concentration_rel_u: float = 0.0
    effective_height_rel_u: float = 0.0


@dataclass(frozen=True, kw_only=True)
class QcImportRequest(Acquisition):
    """A reference-analyte spectrum or map measured on a substrate, to be judged."""

    substrate: Substrate
    reference: ReferenceMeasurement | None = None
    surface_density_per_nm2: float | None = None
    surface_density_rel_u: float = 0.0
    # The surface-area factor: derived from the substrate's deposition unless entered (with
    # its source) or assumed to be 1 by explicit choice (enhancement.surface_area_for).
    surface_area_factor: float | None = None
    surface_area_rel_u: float = 0.0
    surface_area_source: str = ""
    surface_area_assumed_one: bool = False
    film_height_rel_u: float = FILM_HEIGHT_REL_U_DEFAULT
    # One file that really measured several substrates (else a reused file is refused).
    shared_measurement: bool = False

    def coverage(self, analyte: ReferenceAnalyte, substrate: Substrate) -> SurfaceCoverage:
        """Surface coverage for the EF: the analyte's monolayer density unless given, and
        the substrate's metal area per projected area."""
        density = (analyte.surface_density_per_nm2 if self.surface_density_per_nm2 is None
                   else self.surface_density_per_nm2)
        area = surface_area_for(substrate, entered=self.surface_area_factor,
                                entered_rel_u=self.surface_area_rel_u,
                                source=self.surface_area_source,
                                assumed_one=self.surface_area_assumed_one,
                                film_height_rel_u=self.film_height_rel_u)
        return SurfaceCoverage(surface_density_per_nm2=density, surface_area=area,
                               surface_density_rel_u=self.surface_density_rel_u)


def acquisition_fields(request: Acquisition) -> dict:
    """The acquisition as stored on every measurement, with the file's SHA-256 (taken once,
    when the upload was received); the file itself is stored by :func:`store_raw_file`."""
    return dict(
        analyte_lot=request.analyte_lot, measured_on=request.measured_on,
        raw_filename=request.filename, raw_sha256=request.upload.sha256,
        laser_nm=request.laser_nm, power_mW=request.power_mW,
        integration_s=request.integration_s, accumulations=request.accumulations,
        objective=request.objective, notes=request.notes)


def store_raw_file(record, upload: RawUpload) -> None:
    """Store the upload, exactly as received, as the record's ``raw_file`` (copied from disk
    in chunks; call inside ``files_removed_if_failed`` so a failed save leaves no file)."""
    with upload.opened() as handle:
        record.raw_file.save(upload.name, handle, save=False)


def _resolve_analyte(lot: ReagentLot, analyte: ReferenceAnalyte | None) -> ReferenceAnalyte:
    _require_kind(lot, [ReagentKind.REFERENCE_ANALYTE], field="analyte_lot")
    known = list(lot.reference_analytes.all())
    if analyte is None:
        if len(known) != 1:
            raise refusal("analyte_lot", f"{lot.code} is not linked to exactly one reference "
                                         "analyte; say which analyte it holds.", "analyte_unknown")
        return known[0]
    if known and analyte not in known:
        raise refusal("analyte", f"{lot.code} holds {', '.join(a.name for a in known)}, "
                                 f"not {analyte.name}.", "analyte_mismatch")
    return analyte


def check_acquisition(request: Acquisition) -> ReferenceAnalyte:
    """Check the lot, date and settings of an acquisition; the analyte it measured."""
    analyte = _resolve_analyte(request.analyte_lot, request.analyte)
    _require_not_future(request.measured_on, field="measured_on")
    check_usable(request.analyte_lot, role="the reference analyte",
                 on_date=request.measured_on, field="analyte_lot")
    require_positive_parameters(request, ("laser_nm", "power_mW", "integration_s"))
    accumulations = request.accumulations
    if int(accumulations) != accumulations or accumulations < 1:
        raise refusal("accumulations", "Must be a whole number of at least 1.", "invalid_value")
    return analyte


def require_positive_parameters(request, fields) -> None:
    """Refuse the first of ``fields`` on ``request`` that is not a finite positive number."""
    for field in fields:
        value = getattr(request, field)
        if value is None or not math.isfinite(value) or value <= 0:
            raise refusal(field, f"Must be a positive number, got {value}.", "invalid_value")
