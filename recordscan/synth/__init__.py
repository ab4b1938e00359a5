"""recordscan.synth."""
