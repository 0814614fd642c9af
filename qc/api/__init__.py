"""REST API of the qc app (UV-vis, Raman QC, limits), routed under /api/v1/ by inventory.api."""
