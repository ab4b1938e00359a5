"""recordscan.fleet."""
