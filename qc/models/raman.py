"""Reference-analyte Raman QC (models)."""

__all__: list[str] = []
