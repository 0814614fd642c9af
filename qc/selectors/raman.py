"""Reference-analyte Raman QC (selectors)."""

__all__: list[str] = []
