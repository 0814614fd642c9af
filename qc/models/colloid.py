"""Colloid UV-vis QC (models)."""

__all__: list[str] = []
