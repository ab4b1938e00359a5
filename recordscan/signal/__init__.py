"""recordscan.signal."""
