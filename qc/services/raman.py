"""Reference-analyte Raman QC (services)."""

__all__: list[str] = []
