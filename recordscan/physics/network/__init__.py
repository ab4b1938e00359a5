"""recordscan.physics.network."""
