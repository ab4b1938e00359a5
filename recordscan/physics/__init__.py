"""recordscan.physics."""
