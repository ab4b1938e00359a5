"""recordscan.plot."""
