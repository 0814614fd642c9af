"""What attaching a chronoamperogram (or entering a charge) computed, as one JSON object (API
response and CLI --json).

``chronoamperogram_summary`` shapes the service's ``ChronoamperogramAttachment``; the
serializer documents that shape (with units) for the OpenAPI schema.  The keys are those the
``import_chronoamperogram --json`` command prints, so a script sees the same object either
way.
"""

from __future__ import annotations

from rest_framework import serializers

from inventory.services.deposition import (
    ChronoamperogramAttachment,
    deposition_run_target_charge_C,
)

from .units import DocumentedFields


def flag_items(flags) -> list[dict]:
    return [{"code": f.code, "target": f.target_code, "message": f.message} for f in flags]


def chronoamperogram_summary(result: ChronoamperogramAttachment) -> dict:
    run, tolerance = result.run, result.tolerance
    return {
        "run": run.code, "file": run.chronoamperogram_name,
        "sha256": run.chronoamperogram_sha256, "unchanged": result.unchanged,
        "charge_C": run.charge_C, "charge_source": run.charge_source,
        "metal_volume_cm3": run.metal_volume_cm3,
        "equivalent_thickness_nm": run.equivalent_thickness_nm,
        "film_height_nm": run.film_height_nm, "height_over_diameter": run.height_over_diameter,
        "target": run.target_height_over_diameter,
        "target_charge_C": deposition_run_target_charge_C(run),
        "deviation": result.deviation_height_over_diameter,
        "tolerance": None if tolerance is None
        else tolerance.max_abs_deviation_height_over_diameter,
        "tolerance_source": None if tolerance is None else tolerance.source,
        "flags": flag_items(result.flags), "notes": list(result.notes),
    }


class FlagItem(serializers.Serializer):
    code = serializers.CharField(help_text="Code of the flag raised.")
    target = serializers.CharField(help_text="Code of the flagged record.")
    message = serializers.CharField()


def _number(help_text: str) -> serializers.FloatField:
    return serializers.FloatField(allow_null=True, help_text=help_text)


class ChronoamperogramResult(DocumentedFields, serializers.Serializer):
    run = serializers.CharField(help_text="Code of the deposition run.")
    file = serializers.CharField(help_text="The file's name as uploaded.")
    sha256 = serializers.CharField(help_text="SHA-256 digest of the file (hex).")
    unchanged = serializers.BooleanField(help_text="True when the run already held this very "
                                                   "file: nothing was recomputed.")
    charge_C = _number("Cathodic charge integrated over the window.")
    charge_source = serializers.CharField(
        help_text="Where charge_C came from: 'chronoamperogram' (integrated from the file) or "
                  "'entered' (as the potentiostat reported it).")
    metal_volume_cm3 = _number("Metal deposited (Faraday's law with the current efficiency).")
    equivalent_thickness_nm = _number("Thickness of a flat film of that volume.")
    film_height_nm = _number("Film height inside the close-packed template.")
    height_over_diameter = _number("Film height / sphere diameter (h/D).")
    target = serializers.FloatField(allow_null=True, help_text="Target h/D. Unit: "
                                    "dimensionless (film height / sphere diameter).")
    target_charge_C = _number("Charge that would give the target h/D.")
    deviation = serializers.FloatField(allow_null=True, help_text="h/D − target h/D. Unit: "
                                       "dimensionless (h/D).")
    tolerance = serializers.FloatField(allow_null=True, help_text="Largest accepted |h/D − "
                                       "target|. Unit: dimensionless (h/D).")
    tolerance_source = serializers.CharField(allow_null=True,
                                             help_text="Where the tolerance came from.")
    flags = FlagItem(many=True, help_text="Flags raised on the run and its pieces.")
    notes = serializers.ListField(child=serializers.CharField())
