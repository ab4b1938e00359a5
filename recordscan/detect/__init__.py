"""recordscan.detect."""
