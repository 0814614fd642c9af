"""The pages: Make forms, record, trace, stock, review and label pages, and the plots.

The top app of the site: it shows inventory and QC together, so it may import both; neither
app imports it (checked by import-linter, ``[tool.importlinter]`` in pyproject.toml).
"""
