"""Colloid UV-vis QC (selectors)."""

__all__: list[str] = []
