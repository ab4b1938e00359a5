"""recordscan.fit."""
