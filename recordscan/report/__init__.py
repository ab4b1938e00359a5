"""recordscan.report."""
