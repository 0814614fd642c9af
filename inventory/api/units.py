"""Field documentation for the OpenAPI schema: every quantity says its unit.

The project puts units in field names (``diameter_nm``, ``charge_C``); this module reads the
unit back from the name so the schema can never disagree with the field.  Quantities without
a unit (ratios, counts, fractions) say so explicitly.  ``DocumentedFields`` fills the
``help_text`` of every serializer field that has none, which drf-spectacular publishes as the
field's description.
"""

from __future__ import annotations

import functools
import math

from rest_framework import serializers

# Longest suffix first, so ``_counts_cm1_per_mW_s`` wins over ``_s``.
_SUFFIX_UNITS: tuple[tuple[str, str], ...] = tuple(sorted({
    "_counts_cm1_per_mW_s": "counts·cm⁻¹/(mW·s) (band area per mW of laser and s of exposure)",
    "_counts_per_mW_s": "counts/(mW·s) (per mW of laser power and s of exposure)",
    "_percent_w_v": "% w/v (g per 100 mL)",
    "_per_nm2": "nm⁻² (molecules per nm²)",
    "_per_mL": "mL⁻¹ (particles per mL)",
    "_g_cm3": "g/cm³",
    "_mol_L": "mol/L",
    "_M1cm1": "M⁻¹·cm⁻¹",
    "_percent": "% (percent)",
    "_fraction": "fraction, dimensionless (0–1)",
    "_rel_u": "relative standard uncertainty, dimensionless fraction",
    "_cm1": "cm⁻¹ (Raman shift)",
    "_cm2": "cm²",
    "_cm3": "cm³",
    "_um2": "µm²",
    "_days": "days",
    "_1cm": "absorbance (dimensionless) of the undiluted colloid in a 1 cm cell",
    "_um": "µm",
    "_nm": "nm",
    "_mW": "mW",
    "_mA": "mA",
    "_mL": "mL",
    "_mM": "mmol/L",
    "_uL": "µL",
    "_min": "min",
    "_cm": "cm",
    "_C": "C (coulomb)",
    "_V": "V versus the cell's reference electrode",
    "_M": "mol/L",
    "_h": "h",
    "_s": "s",
}.items(), key=lambda item: -len(item[0])))

# Quantities whose name carries no unit because they have none.
_DIMENSIONLESS = {
    "height_over_diameter": "dimensionless (film height / sphere diameter)",
    "target_height_over_diameter": "dimensionless (film height / sphere diameter)",
    "max_abs_deviation_height_over_diameter": "dimensionless (h/D)",
    "deviation_height_over_diameter": "dimensionless (h/D)",
    "current_efficiency": "dimensionless fraction (0–1]",
    "electrons_per_atom": "count (electrons transferred per deposited atom)",
    "ratio_spr_450": "dimensionless (A at the plasmon peak / A at 450 nm)",
    "aggregation_index": "dimensionless",
    "aggregation_index_max": "dimensionless",
    "aggregation_index_change": "dimensionless",
    "limits_version": "count (version of the limit set that judged the record)",
    "snr": "dimensionless (signal-to-noise ratio)",
    "min_snr": "dimensionless (signal-to-noise ratio)",
    "min_map_points": "count (points of a map)",
    "enhancement_factor": "dimensionless",
    "enhancement_factor_u": "dimensionless (standard uncertainty of the enhancement factor)",
    "min_enhancement_factor": "dimensionless",
    "log10_enhancement_factor": "dimensionless (log10 of the enhancement factor)",
    "log10_enhancement_factor_u": "dimensionless (standard uncertainty of log10 EF)",
    "mie_geometric_sigma": "dimensionless (geometric standard deviation σ_g)",
    "mie_rms_residual": "absorbance (dimensionless)",
    "mie_relative_residual": "dimensionless fraction",
    "fraction_within_20_percent": "dimensionless fraction (0–1)",
    "surface_area_factor": "dimensionless (real / projected area)",
    "surface_area_factor_u": "dimensionless (standard uncertainty of the surface-area factor)",
    "suspension_excess_factor": "dimensionless (≥ 1)",
    "dilution_factor": "dimensionless (total volume / colloid volume)",
    "spheres_per_cm2": "cm⁻² (spheres per cm²)",
    "quantity": "in the unit given by quantity_unit",
    "accumulations": "count",
    "pieces": "count",
    "n_points": "count (spectra in the map)",
    "map_nx": "count (map columns)",
    "map_ny": "count (map rows)",
    "point_count": "count (points in the spectrum)",
    "spikes_removed": "count",
    "version": "count (edits so far; for conflict detection)",
    "record_version": "count (the record's version when signed)",
    "expected_version": "count (the record's version the editor saw)",
    "id": "none (row identifier, used in this kind's URL)",
    "size_bytes": "bytes",
    "depth": "count (steps from the root)",
    "days": "days",
    "days_left": "days (negative when already expired)",
}

_NUMERIC = (serializers.FloatField, serializers.IntegerField, serializers.DecimalField)


def unit_of(name: str) -> str | None:
    """The unit a field name declares, or None when it names no quantity."""
    if name in _DIMENSIONLESS:
        return _DIMENSIONLESS[name]
    for suffix, unit in _SUFFIX_UNITS:
        if name.endswith(suffix):
            return unit
    return None


def _sentence(name: str) -> str:
    """``film_height_nm`` -> "Film height." (the unit is said separately)."""
    suffix = next((s for s, _ in _SUFFIX_UNITS if name.endswith(s) and name != s), "")
    words = name[: len(name) - len(suffix)].replace("_", " ").strip()
    return words[:1].upper() + words[1:] + "."


def describe(name: str, field: serializers.Field, text: str = "") -> str:
    """``text`` (or a sentence made from the name) followed by the unit or the value's form."""
    return _describe(name, type(field), text)


@functools.cache
def _describe(name: str, field_type: type, text: str) -> str:
    # Cached: serializers are built per request, and the answer depends only on these three.
    if "Unit:" in text:
        return text
    unit = unit_of(name)
    sentence = text.strip() or _sentence(name)
    if unit is not None:
        return f"{sentence} Unit: {unit}."
    if issubclass(field_type, serializers.DateTimeField):
        return f"{sentence} ISO 8601 date and time (UTC)."
    if issubclass(field_type, serializers.DateField):
        return f"{sentence} ISO 8601 date (YYYY-MM-DD)."
    if issubclass(field_type, serializers.PrimaryKeyRelatedField):
        return f"{sentence} Unit: none (the id of the related row)."
    if issubclass(field_type, _NUMERIC):
        raise TypeError(f"Field '{name}' is a number without a unit; name its unit or add it "
                         "to inventory.api.units._DIMENSIONLESS.")
    return sentence


def _document(name: str, field: serializers.Field) -> None:
    child = getattr(field, "child", None) or getattr(field, "child_relation", None)
    field.help_text = describe(name, child or field, str(field.help_text or ""))


class DocumentedFields:
    """Serializer mixin: every field gets a description ending in its unit."""

    def get_fields(self):
        fields = super().get_fields()
        for name, field in fields.items():
            _document(name, field)
        return fields


def integer_bounds(span) -> dict[str, int]:
    """``min_value``/``max_value`` of an integer field, taken from its ``ranges.Span``.

    So a serializer refuses exactly what the range table (and the CHECK constraint made from
    it) refuses, and the bounds are written once, in the table; an open low end
    (``above``) starts at the next whole number.
    """
    low = math.floor(span.low) + 1 if span.above else math.ceil(span.low)
    return {"min_value": low, "max_value": math.floor(span.high)}


def declare_range(field: serializers.Field, span) -> None:
    """Declare ``span`` (a ``ranges.Span``) as the field's schema bounds.

    OpenAPI 3.0 marks an open end with ``exclusiveMinimum: true``, which drf-spectacular
    cannot express from ``min_value``, so the field's schema is given whole (its
    description is still added from ``help_text``).
    """
    is_integer = isinstance(field, serializers.IntegerField)
    schema = {"type": "integer"} if is_integer else {"type": "number", "format": "double"}
    schema.update(minimum=span.low, maximum=span.high)
    if span.above:
        schema["exclusiveMinimum"] = True
    field._spectacular_annotation = {"field": schema}
