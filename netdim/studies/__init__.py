"""Studies around a plan."""
