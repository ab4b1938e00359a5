"""recordscan.relaytest."""
