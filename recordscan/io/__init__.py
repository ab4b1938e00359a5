"""recordscan.io."""
