"""REST API (DESIGN §6): thin DRF views over the same services and selectors as the pages."""
