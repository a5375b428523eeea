"""Reports: text tables, JSON, CSV."""
