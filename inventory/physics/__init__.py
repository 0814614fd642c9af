"""Fabrication physics, pure: numpy in, numbers or small dataclasses out.

Reading chronoamperograms, Faraday's law from charge to metal film, and the geometry of the
close-packed sphere template.  It sits beside the fabrication records it serves and imports
no Django, no plotting and nothing from the apps above it (checked by import-linter, see
``[tool.importlinter]`` in pyproject.toml).  ``errors`` and ``validation`` are the one error
type and the input checks shared with the QC science in :mod:`qc.analysis`.
"""
