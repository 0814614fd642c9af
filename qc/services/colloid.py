"""Colloid UV-vis QC (services)."""

__all__: list[str] = []
