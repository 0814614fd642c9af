"""Quality-control records (measurements, limits, UV-vis records) live here."""
